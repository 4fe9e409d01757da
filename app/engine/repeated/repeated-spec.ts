/**
 * The repeated-measures (MMRM) specification: the linear model's specification plus a
 * `repeated` object naming the subject and visit columns, the covariance structure of the
 * visits within a subject, its ordered fallbacks, the degrees-of-freedom method and REML or ML.
 */
import { z } from "zod";
import { EngineError } from "../errors";
import { modelSpecSchema } from "../model-spec";

export const covarianceStructureSchema = z.enum([
  "unstructured",
  "toeplitz",
  "toeplitz-heterogeneous",
  "ar1",
  "ar1-heterogeneous",
  "compound-symmetry",
  "compound-symmetry-heterogeneous",
]);

export const repeatedDfSchema = z.enum(["satterthwaite", "kenward-roger", "residual"]);
export const repeatedMethodSchema = z.enum(["reml", "ml"]);

export const repeatedSchema = z
  .object({
    /** Subject identifier column: records of one subject are correlated. */
    subject: z.string().min(1),
    /** Visit column; must also be a categorical main term of the model. */
    visit: z.string().min(1),
    /** Numeric column giving the visits' order (one value per visit); visit level order when absent. */
    visitOrder: z.string().min(1).optional(),
    covariance: covarianceStructureSchema.default("unstructured"),
    /** Structures to try, in order, when the planned one does not converge. */
    fallback: z.array(covarianceStructureSchema).default([]),
    df: repeatedDfSchema.default("satterthwaite"),
    method: repeatedMethodSchema.default("reml"),
    /** Visit (cell text) whose treatment contrast the subject influence measures; the last visit when absent. */
    primaryVisit: z.string().min(1).optional(),
  })
  .strict();

export const repeatedSpecSchema = modelSpecSchema.extend({ repeated: repeatedSchema });

export type CovarianceStructureName = z.infer<typeof covarianceStructureSchema>;
export type RepeatedDf = z.infer<typeof repeatedDfSchema>;
export type RepeatedMethod = z.infer<typeof repeatedMethodSchema>;
export type RepeatedSpec = z.output<typeof repeatedSpecSchema>;
export type RepeatedSpecInput = z.input<typeof repeatedSpecSchema>;

/** True when a parsed JSON value asks for a repeated-measures model. */
export function isRepeatedSpec(value: unknown): boolean {
  return typeof value === "object" && value !== null && "repeated" in value;
}

/** Validates an unknown value as a repeated-measures specification; throws EngineError with one line. */
export function parseRepeatedSpec(value: unknown): RepeatedSpec {
  const parsed = repeatedSpecSchema.safeParse(value);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const where = issue.path.length > 0 ? ` at "${issue.path.join(".")}"` : "";
    throw new EngineError(`repeated-measures model specification is not valid${where}: ${issue.message}`);
  }
  const spec = parsed.data;
  if (spec.family !== "gaussian")
    throw new EngineError(`a repeated-measures model needs the gaussian family, not "${spec.family}"`);
  if (spec.link !== undefined && spec.link !== "identity")
    throw new EngineError(`a repeated-measures model needs the identity link, not "${spec.link}"`);
  if (spec.weights) throw new EngineError("a repeated-measures model does not take prior weights");
  if (spec.offset) throw new EngineError("a repeated-measures model does not take an offset");
  if (spec.repeated.df === "kenward-roger" && spec.repeated.method !== "reml") {
    throw new EngineError('Kenward–Roger degrees of freedom need a REML fit ("method": "reml")');
  }
  return spec;
}
