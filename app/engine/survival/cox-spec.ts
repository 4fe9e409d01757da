/**
 * The time-to-event model specification: one JSON object describes a planned Cox proportional
 * hazards model. `response` is the time column; `status` names the column and the values in it
 * that mean the event happened (ADaM time-to-event data code censoring as CNSR = 1, so an event
 * is `{"column": "CNSR", "event": [0]}`).
 */
import { z } from "zod";
import { EngineError } from "../errors";
import { termSchema } from "../model-spec";
import { populationSchema } from "../population";

export const tiesSchema = z.enum(["efron", "breslow"]);
export const timeTransformSchema = z.enum(["km", "rank", "identity", "log"]);

export const coxSpecSchema = z
  .object({
    family: z.literal("cox"),
    /** Column holding the follow-up time (event or censoring), non-negative. */
    response: z.string().min(1),
    status: z
      .object({
        column: z.string().min(1),
        /** Cell values that mean the event happened; every other non-missing value is censoring. */
        event: z.array(z.union([z.string().min(1), z.number()])).min(1),
      })
      .strict(),
    terms: z.array(termSchema).default([]),
    /** The categorical main term that is the randomized treatment (Kaplan–Meier and log-rank by its levels). */
    treatment: z.string().min(1).optional(),
    /** Columns whose combinations define the strata (separate baseline hazards). */
    strata: z.array(z.string().min(1)).default([]),
    ties: tiesSchema.default("efron"),
    /** Column of case weights (positive numbers). */
    weights: z.string().min(1).optional(),
    /** Column added to the linear predictor with coefficient one. */
    offset: z.string().min(1).optional(),
    /** Column of the clusters (usually the subject) for the robust sandwich variance. */
    cluster: z.string().min(1).optional(),
    /** Subject identifier column, echoed per observation. */
    id: z.string().min(1).optional(),
    /** The analysis population: conditions every analysed row meets (population.ts). */
    population: populationSchema.optional(),
    proportionalHazards: z
      .object({ transform: timeTransformSchema.default("km") })
      .strict()
      .default({ transform: "km" }),
  })
  .strict();

export type Ties = z.infer<typeof tiesSchema>;
export type TimeTransform = z.infer<typeof timeTransformSchema>;
/** A validated time-to-event specification (defaults filled in). */
export type CoxSpec = z.output<typeof coxSpecSchema>;
export type CoxSpecInput = z.input<typeof coxSpecSchema>;

/** True when a parsed JSON value asks for a time-to-event model. */
export function isCoxSpec(value: unknown): boolean {
  return typeof value === "object" && value !== null && (value as { family?: unknown }).family === "cox";
}

/** Validates an unknown value (parsed JSON) as a time-to-event specification; throws EngineError with one line. */
export function parseCoxSpec(value: unknown): CoxSpec {
  const parsed = coxSpecSchema.safeParse(value);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const where = issue.path.length > 0 ? ` at "${issue.path.join(".")}"` : "";
    throw new EngineError(`time-to-event model specification is not valid${where}: ${issue.message}`);
  }
  return parsed.data;
}
