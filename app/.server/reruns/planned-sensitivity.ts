/**
 * The plan's sensitivity analyses of a model as reruns: the options each runs with, given the
 * primary rerun's result (the exclusion of influential subjects needs its flagged rows). Read by
 * the rerun job, which queues them when the primary completes, and by the results page.
 */
import { familyOfSpec, sensitivityApplies } from "~/engine/family-applicability";
import { covarianceStructureSchema, type CovarianceStructureName } from "~/engine/repeated/repeated-spec";
import { SENSITIVITY_LABELS, type PlannedModel, type PlannedSensitivity } from "../plans/planned-model";
import { describeOptions, type RerunOptions } from "./rerun-options";
import type { RerunDocument } from "./reruns.server";

/** Why the pre-specified exclusion leaves its rows out (the planned analysis, or a what-if choosing exactly its rows). */
export const COOKS_EXCLUSION_REASON = "flagged by the Cook's distance check";

/** Why the pre-specified exclusion of a repeated-measures model leaves out its subjects' records. */
export const SUBJECT_INFLUENCE_EXCLUSION_REASON = "flagged by the subject influence check";

/**
 * The subjects the primary rerun's repeated-measures influence check flagged, with every data row
 * of their records (ascending); null when the rerun has no such check (not a repeated-measures model).
 */
function influentialSubjects(
  primary: Pick<RerunDocument, "checks"> | null,
): { subjects: number; rows: number[] } | null {
  const check = primary?.checks.find((c) => c.key === "repeated_influence");
  if (!check) return null;
  const flagged = check.flagged ?? [];
  const rows = [...new Set(flagged.flatMap((f) => f.rows ?? [f.row]))].sort((a, b) => a - b);
  return { subjects: flagged.length, rows };
}

/** The covariance structure a plan's `repeated_structure` analysis names; undefined when it names none (read defensively: plans store it as text). */
export function plannedStructureOf(s: PlannedSensitivity): CovarianceStructureName | undefined {
  const parsed = covarianceStructureSchema.safeParse((s as { structure?: unknown }).structure);
  return parsed.success ? parsed.data : undefined;
}

/** The rows the primary rerun's Cook's distance check flagged, ascending. */
function cooksFlaggedRows(primary: Pick<RerunDocument, "checks"> | null): number[] {
  return (primary?.checks.find((c) => c.key === "cooks_distance")?.flagged ?? [])
    .map((f) => f.row)
    .sort((a, b) => a - b);
}

/** Whether the plan names the exclusion of influential subjects among a model's sensitivity analyses. */
export function plansInfluentialExclusion(model: Pick<PlannedModel, "sensitivity">): boolean {
  return model.sensitivity.some((s) => s.kind === "exclude_influential");
}

/** The options of a planned sensitivity analysis, given the primary rerun's result; null when there is nothing to run. */
export function optionsFor(
  s: PlannedSensitivity,
  primary: Pick<RerunDocument, "checks"> | null,
): RerunOptions | null {
  switch (s.kind) {
    case "robust_hc3":
      return { variant: "robust_hc3" };
    case "variance_function":
      return { variant: "variance_function", varianceBy: s.varianceBy ?? "fitted" };
    case "alternative_covariates":
      return {
        variant: "alternative_covariates",
        covariates: s.covariates ?? [],
        label: s.label ?? "Alternative covariate set",
      };
    case "exclude_influential": {
      // a repeated-measures model leaves out every record of each flagged subject
      const subjects = influentialSubjects(primary);
      if (subjects)
        return subjects.subjects > 0
          ? {
              variant: "exclude_rows",
              rows: subjects.rows,
              subjects: subjects.subjects,
              reason: SUBJECT_INFLUENCE_EXCLUSION_REASON,
            }
          : null;
      const rows = cooksFlaggedRows(primary);
      return rows.length ? { variant: "exclude_rows", rows, reason: COOKS_EXCLUSION_REASON } : null;
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
    case "repeated_structure": {
      const structure = plannedStructureOf(s);
      return structure ? { variant: "repeated_structure", structure } : null;
    }
  }
}

/**
 * The planned sensitivity analyses that run with a completed primary rerun, in the plan's order:
 * those that apply to the model's family and have something to run. What-if analyses that are
 * not pre-specified stay manual.
 */
export function plannedSensitivityOptions(
  model: Pick<PlannedModel, "spec" | "sensitivity">,
  primary: Pick<RerunDocument, "checks">,
): RerunOptions[] {
  return model.sensitivity.flatMap((s) => {
    if (!sensitivityApplies(s.kind, familyOfSpec(model.spec))) return [];
    const options = optionsFor(s, primary);
    return options ? [options] : [];
  });
}

/** A planned sensitivity analysis as the results page names it, given the options it runs with (null: nothing to run). */
export function sensitivityLabel(s: PlannedSensitivity, options: RerunOptions | null): string {
  if (!options) return SENSITIVITY_LABELS[s.kind];
  if (s.kind === "alternative_covariates") return `${s.label}: ${(s.covariates ?? []).join(", ")}`;
  return options.variant === "cox_rmst" || options.variant === "repeated_structure"
    ? describeOptions(options)
    : SENSITIVITY_LABELS[s.kind];
}

/**
 * The what-if's exclusion as a rerun: pre-specified only when the plan names the exclusion of
 * influential subjects and the rows chosen are exactly those the Cook's distance check flagged.
 * `rows` sorted ascending.
 */
export function whatIfExclusion(
  model: Pick<PlannedModel, "sensitivity">,
  primary: Pick<RerunDocument, "checks"> | null,
  rows: number[],
): { options: RerunOptions; prespecified: boolean } {
  const prespecified =
    plansInfluentialExclusion(model) && JSON.stringify(rows) === JSON.stringify(cooksFlaggedRows(primary));
  return {
    options: {
      variant: "exclude_rows",
      rows,
      reason: prespecified ? COOKS_EXCLUSION_REASON : "chosen in the what-if, not pre-specified",
    },
    prespecified,
  };
}
