/** How a rerun differs from the planned fit: the primary analysis or one of its sensitivity analyses. */
import { z } from "zod";
import { covarianceStructureSchema } from "~/engine/repeated/repeated-spec";
import { COVARIANCE_STRUCTURE_WORDS } from "~/engine/repeated/repeated-names";
import { SENSITIVITY_LABELS } from "../plans/planned-model";

export const rerunOptionsSchema = z.discriminatedUnion("variant", [
  z.object({ variant: z.literal("planned") }),
  z.object({ variant: z.literal("robust_hc3") }),
  z.object({ variant: z.literal("variance_function"), varianceBy: z.enum(["fitted", "treatment"]) }),
  /**
   * Subjects left out by row number (1-based data rows of the locked file). A repeated-measures
   * model leaves out every record of each subject: `subjects` counts them (absent: one row a subject).
   */
  z.object({
    variant: z.literal("exclude_rows"),
    rows: z.array(z.number().int().positive()).min(1),
    subjects: z.number().int().positive().optional(),
    reason: z.string(),
  }),
  z.object({
    variant: z.literal("alternative_covariates"),
    covariates: z.array(z.string()),
    label: z.string(),
  }),
  /** Counts: the planned Poisson model refitted with another family for overdispersion. */
  z.object({ variant: z.literal("family"), family: z.enum(["quasipoisson", "negative-binomial"]) }),
  /** Time to event: the planned Cox model with the robust (sandwich) variance, clustered by the subject id. */
  z.object({ variant: z.literal("cox_robust_subject") }),
  /** Time to event: the planned Cox model without its strata (one baseline hazard). */
  z.object({ variant: z.literal("cox_unstratified") }),
  /** Time to event: the difference in restricted mean survival time between arms up to the horizon τ. */
  z.object({ variant: z.literal("cox_rmst"), tau: z.number().positive() }),
  /** Repeated measures: the planned MMRM refitted with another covariance structure of the visits (no fallback). */
  z.object({ variant: z.literal("repeated_structure"), structure: covarianceStructureSchema }),
]);
export type RerunOptions = z.infer<typeof rerunOptionsSchema>;

export function describeOptions(o: RerunOptions): string {
  switch (o.variant) {
    case "planned":
      return "Primary analysis as planned";
    case "robust_hc3":
      return "Robust (HC3) standard errors";
    case "variance_function":
      return o.varianceBy === "treatment"
        ? "Weighted fit, variance per arm"
        : "Weighted fit, variance depending on the fitted values";
    case "exclude_rows": {
      const n = o.subjects ?? o.rows.length;
      const records =
        o.subjects === undefined ? "" : `, ${o.rows.length} record${o.rows.length === 1 ? "" : "s"}`;
      return `Excluding ${n} subject${n === 1 ? "" : "s"}${records} (${o.reason})`;
    }
    case "alternative_covariates":
      return `${o.label}: ${o.covariates.join(", ") || "treatment only"}`;
    case "family":
      return o.family === "quasipoisson"
        ? "Quasi-Poisson (dispersion estimated)"
        : "Negative binomial (NB2, θ by maximum likelihood)";
    case "cox_robust_subject":
      return SENSITIVITY_LABELS.cox_robust_subject;
    case "cox_unstratified":
      return SENSITIVITY_LABELS.cox_unstratified;
    case "cox_rmst":
      return `${SENSITIVITY_LABELS.cox_rmst} to τ = ${o.tau}`;
    case "repeated_structure":
      return `${SENSITIVITY_LABELS.repeated_structure}: ${COVARIANCE_STRUCTURE_WORDS[o.structure]}`;
  }
}
