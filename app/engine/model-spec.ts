import { z } from "zod";
import { populationSchema } from "./population";
import { multiplicitySchema } from "./multiplicity";
import { publishedValueSchema } from "./published-values";

/** A main-effect term: one variable, continuous or categorical. */
export const mainTermSchema = z
  .object({
    variable: z.string().min(1),
    /** Treat the column as categorical even when every cell is a number. */
    categorical: z.boolean().optional(),
    /** Reference level for treatment coding (cell text as written). */
    reference: z.string().optional(),
  })
  .strict();

/** An interaction of two or three variables that are also main terms. */
export const interactionTermSchema = z
  .object({
    interaction: z.array(z.string().min(1)).min(2).max(3),
  })
  .strict();

export const termSchema = z.union([mainTermSchema, interactionTermSchema]);

export const meansWeightingSchema = z.enum(["equal", "proportional"]);
export const contrastsSchema = z.enum(["reference", "pairwise"]);
export type ContrastSet = z.infer<typeof contrastsSchema>;

export const familySchema = z.enum(["gaussian", "binomial", "poisson", "quasipoisson", "negative-binomial"]);
export const linkSchema = z.enum(["identity", "log", "logit", "probit", "cloglog", "inverse", "sqrt"]);

/**
 * The model specification: one JSON object describes a planned model. Planned models in the
 * web app store exactly this object, and the headless rerun command reads it.
 */
export const modelSpecSchema = z
  .object({
    /** Column holding the response (endpoint). */
    response: z.string().min(1),
    family: familySchema.default("gaussian"),
    /** Optional; the family's canonical link when absent. */
    link: linkSchema.optional(),
    intercept: z.boolean().default(true),
    terms: z.array(termSchema).default([]),
    /** Column of prior weights (positive numbers). */
    weights: z.string().min(1).optional(),
    /** Column added to the linear predictor with coefficient one. */
    offset: z.string().min(1).optional(),
    /** Subject identifier column, echoed per observation. */
    id: z.string().min(1).optional(),
    /** The categorical main term that is the randomized treatment. */
    treatment: z.string().min(1).optional(),
    /** Binomial family: the level of a two-level response column counted as the event (1). */
    event: z.string().min(1).optional(),
    /** The analysis population: conditions every analysed row meets (population.ts). */
    population: populationSchema.optional(),
    /** How adjusted means average over the other categorical factors (default equal). */
    means: meansWeightingSchema.optional(),
    /** Treatment contrasts: each arm against the reference (default) or all pairs of arms. */
    contrasts: contrastsSchema.optional(),
    /** Multiplicity adjustment of the treatment contrasts' p-values (default none). */
    multiplicity: multiplicitySchema.optional(),
    /** Values a clinical study report printed, which the rerun must reproduce (reproduction.ts). */
    published: z.array(publishedValueSchema).optional(),
  })
  .strict();

export type MainTerm = z.infer<typeof mainTermSchema>;
export type InteractionTerm = z.infer<typeof interactionTermSchema>;
export type Term = z.infer<typeof termSchema>;
export type Family = z.infer<typeof familySchema>;
export type Link = z.infer<typeof linkSchema>;
/** A validated model specification (defaults filled in). */
export type ModelSpec = z.output<typeof modelSpecSchema>;
/** A model specification as written (defaults may be missing). */
export type ModelSpecInput = z.input<typeof modelSpecSchema>;

export function isInteraction(term: Term): term is InteractionTerm {
  return "interaction" in term;
}

/** The canonical link of each family. */
export const CANONICAL_LINK: Record<Family, Link> = {
  gaussian: "identity",
  binomial: "logit",
  poisson: "log",
  quasipoisson: "log",
  "negative-binomial": "log",
};

import { EngineError } from "./errors";

/** Validates an unknown value (parsed JSON) as a model specification; throws EngineError with one line. */
export function parseModelSpec(value: unknown): ModelSpec {
  const parsed = modelSpecSchema.safeParse(value);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const where = issue.path.length > 0 ? ` at "${issue.path.join(".")}"` : "";
    throw new EngineError(`model specification is not valid${where}: ${issue.message}`);
  }
  return parsed.data;
}
