/**
 * The plan's sensitivity analyses of a model as reruns: the options each runs with, given the
 * primary rerun's result (the exclusion of influential subjects needs its flagged rows). Read by
 * the rerun job, which queues them when the primary completes, and by the results page.
 */
import { sensitivityApplies } from "~/engine/family-applicability";
import type { PlannedModel, PlannedSensitivity } from "../plans/planned-model";
import type { RerunOptions } from "./rerun-options";
import type { RerunDocument } from "./reruns.server";

/** The options of a planned sensitivity analysis, given the primary rerun's result; null when there is nothing to run. */
export function optionsFor(s: PlannedSensitivity, primary: Pick<RerunDocument, "checks"> | null): RerunOptions | null {
  switch (s.kind) {
    case "robust_hc3":
      return { variant: "robust_hc3" };
    case "variance_function":
      return { variant: "variance_function", varianceBy: s.varianceBy ?? "fitted" };
    case "alternative_covariates":
      return { variant: "alternative_covariates", covariates: s.covariates ?? [], label: s.label ?? "Alternative covariate set" };
    case "exclude_influential": {
      const rows = primary?.checks.find((c) => c.key === "cooks_distance")?.flagged?.map((f) => f.row) ?? [];
      return rows.length ? { variant: "exclude_rows", rows: [...rows].sort((a, b) => a - b), reason: "flagged by the Cook's distance check" } : null;
    }
    case "quasi_poisson":
      return { variant: "family", family: "quasipoisson" };
    case "negative_binomial":
      return { variant: "family", family: "negative-binomial" };
    case "cox_robust_subject":
    case "cox_unstratified":
      return { variant: s.kind };
    case "cox_rmst":
      return s.tau ? { variant: "cox_rmst", tau: s.tau } : null;
  }
}

/**
 * The planned sensitivity analyses that run with a completed primary rerun, in the plan's order:
 * those that apply to the model's family and have something to run. What-if analyses that are
 * not pre-specified stay manual.
 */
export function plannedSensitivityOptions(model: Pick<PlannedModel, "spec" | "sensitivity">, primary: Pick<RerunDocument, "checks">): RerunOptions[] {
  return model.sensitivity.flatMap((s) => {
    if (!sensitivityApplies(s.kind, model.spec.family)) return [];
    const options = optionsFor(s, primary);
    return options ? [options] : [];
  });
}
