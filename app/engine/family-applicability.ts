/**
 * Which checks and which sensitivity analyses apply to a model family: the one rule the plan
 * editor (what it offers), the plan's validation (what it stores) and the rerun (what it
 * evaluates) all read. Pure: no I/O; importable by components.
 */
import type { CheckDefinition } from "./checks";

/** The sensitivity analyses a plan can name (stored in planned models; rerun-options.ts runs them). */
export const SENSITIVITY_KINDS = [
  "robust_hc3",
  "variance_function",
  "exclude_influential",
  "alternative_covariates",
  "quasi_poisson",
  "negative_binomial",
  "cox_robust_subject",
  "cox_unstratified",
  "cox_rmst",
  "repeated_structure",
] as const;
export type SensitivityKind = (typeof SENSITIVITY_KINDS)[number];

/**
 * A family as a plan or a fitted result names it: the editor's gaussian, binomial, poisson or
 * cox, and the count families a sensitivity analysis refits a Poisson model with.
 */
export type AnyFamily =
  "gaussian" | "binomial" | "poisson" | "quasipoisson" | "negative-binomial" | "cox" | "repeated";

type ModelKind = "linear" | "glm" | "cox" | "repeated";

/** The family a stored specification stands for here: "repeated" for a repeated-measures one (gaussian with a `repeated` key). */
export function familyOfSpec(spec: { family?: string }): string {
  return "repeated" in spec ? "repeated" : (spec.family ?? "gaussian");
}

/** "repeated" stands for a repeated-measures (MMRM) model: normal responses, correlated within a subject. */
const kindOf = (family: string): ModelKind =>
  family === "gaussian" ? "linear" : family === "cox" ? "cox" : family === "repeated" ? "repeated" : "glm";

const COUNT_FAMILIES: readonly string[] = ["poisson", "quasipoisson", "negative-binomial"];

/**
 * Checks that apply to some families of their kind of model only. Overdispersion is judged on
 * counts: a 0/1 response has no dispersion to estimate (its variance is fixed by its mean).
 */
const CHECK_FAMILIES: Partial<Record<CheckDefinition["key"], readonly string[]>> = {
  overdispersion: COUNT_FAMILIES,
};

/** Whether a check of the catalogue applies to a model of this family (and with or without a treatment term). */
export function checkApplies(
  def: Pick<CheckDefinition, "key" | "models" | "needsTreatment">,
  family: string,
  hasTreatment = true,
): boolean {
  const kind = kindOf(family);
  if (def.needsTreatment && !hasTreatment) return false;
  const byKind =
    kind === "cox" || kind === "repeated"
      ? def.models === kind
      : def.models === "both" || def.models === kind;
  const families = CHECK_FAMILIES[def.key];
  return byKind && (!families || families.includes(family));
}

/** The families each sensitivity analysis applies to. */
const SENSITIVITY_FAMILIES: Record<SensitivityKind, readonly AnyFamily[]> = {
  // HC3 for a linear model; for a GLM the sandwich (HC3) covariance of the coefficients, as sandwich::vcovHC
  robust_hc3: ["gaussian", "binomial", "poisson"],
  variance_function: ["gaussian"],
  exclude_influential: ["gaussian", "binomial", "poisson", "repeated"],
  alternative_covariates: ["gaussian", "binomial", "poisson", "cox", "repeated"],
  quasi_poisson: ["poisson"],
  negative_binomial: ["poisson"],
  cox_robust_subject: ["cox"],
  cox_unstratified: ["cox"],
  cox_rmst: ["cox"],
  // a repeated-measures model refitted with another covariance structure of the visits
  repeated_structure: ["repeated"],
};

export function sensitivityApplies(kind: SensitivityKind, family: string): boolean {
  return SENSITIVITY_FAMILIES[kind].some((f) => f === family);
}

/** Why a sensitivity analysis does not apply to a family, in words for the editor; null when it applies. */
export function sensitivityProblem(kind: SensitivityKind, family: string): string | null {
  if (sensitivityApplies(kind, family)) return null;
  switch (kind) {
    case "quasi_poisson":
    case "negative_binomial":
      return "Quasi-Poisson and negative binomial analyses apply to a Poisson model of counts.";
    case "variance_function":
      return "A weighted fit with an estimated variance function applies to a linear model; for a generalized linear model plan robust (sandwich) standard errors instead.";
    case "cox_robust_subject":
    case "cox_unstratified":
    case "cox_rmst":
      return "This analysis applies to a time-to-event (Cox) model.";
    case "robust_hc3":
      return "Robust (HC3) standard errors apply to linear and generalized linear models; for a time-to-event model plan robust errors clustered by subject.";
    case "exclude_influential":
      return "Excluding subjects flagged by Cook's distance applies to linear, generalized linear and repeated-measures models.";
    case "repeated_structure":
      return "Another covariance structure of the visits applies to a repeated-measures (MMRM) model.";
    case "alternative_covariates":
      return "An alternative covariate set does not apply to this model.";
  }
}
