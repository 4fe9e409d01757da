/** Shapes a stored planned model for display (plain data for loaders). */
import { interactionName } from "~/engine/coefficient-names";
import { CANONICAL_LINK } from "~/engine/model-spec";
import type { CoxSpec } from "~/engine/survival/cox-spec";
import { COVARIANCE_STRUCTURE_WORDS } from "~/engine/repeated/repeated-names";
import { CHECK_BY_KEY } from "~/engine/checks";
import { CONTRAST_SET_NAMES, MEANS_WEIGHTING_NAMES, MULTIPLICITY_NAMES } from "~/engine/multiplicity";
import { describePopulation } from "~/engine/population";
import { publishedInWords } from "~/engine/published-values";
import type { PlannedModelView } from "~/components/planned-model-summary";
import { SENSITIVITY_LABELS } from "./planned-model";
import { repeatedWords } from "./repeated-planned-model";
import type { StoredPlannedModel } from "./plans.server";

/** A time-to-event model's own fields in words. */
function survivalWords(s: CoxSpec): [string, string][] {
  return [
    ["Status", `${s.status.column}; event when ${s.status.event.join(" or ")}`],
    ["Strata", s.strata.length ? s.strata.join(", ") : "none"],
    ["Ties", s.ties === "efron" ? "Efron" : "Breslow"],
    [
      "PH test time scale",
      { km: "Kaplan–Meier", rank: "rank", identity: "time", log: "log time" }[
        s.proportionalHazards.transform
      ],
    ],
  ];
}

export function plannedModelView(m: StoredPlannedModel): PlannedModelView {
  const main = m.spec.terms.filter(
    (t): t is { variable: string; categorical?: boolean; reference?: string } => "variable" in t,
  );
  const treatment = main.find((t) => t.variable === m.spec.treatment);
  return {
    id: m.id,
    key: m.key,
    title: m.title,
    datasetName: m.datasetName,
    population: describePopulation(m.spec.population),
    ...(m.spec.family !== "cox" && m.spec.treatment
      ? {
          analysis: [
            ["Adjusted means", MEANS_WEIGHTING_NAMES[m.spec.means ?? "equal"]],
            ["Treatment contrasts", CONTRAST_SET_NAMES[m.spec.contrasts ?? "reference"]],
            ["Multiplicity", MULTIPLICITY_NAMES[m.spec.multiplicity ?? "none"]],
          ] satisfies [string, string][],
        }
      : {}),
    response: m.spec.response,
    family: "repeated" in m.spec ? "repeated" : m.spec.family,
    link:
      m.spec.family === "cox"
        ? "log hazard ratio (partial likelihood)"
        : (m.spec.link ?? CANONICAL_LINK[m.spec.family]),
    ...(m.spec.family === "cox" ? { survival: survivalWords(m.spec) } : {}),
    ...("repeated" in m.spec ? { repeated: repeatedWords(m.spec) } : {}),
    treatment: m.spec.treatment ?? null,
    reference: treatment?.reference ?? null,
    covariates: main
      .filter((t) => t.variable !== m.spec.treatment)
      .map((t) =>
        t.categorical
          ? `${t.variable} (categorical${t.reference ? `, reference ${t.reference}` : ""})`
          : t.variable,
      ),
    interactions: m.spec.terms.flatMap((t) => ("interaction" in t ? [interactionName(t.interaction)] : [])),
    weights: m.spec.weights ?? null,
    offset: m.spec.offset ?? null,
    id_: m.spec.id ?? null,
    checks: m.checks
      .filter((c) => c.enabled)
      .map((c) => {
        const def = CHECK_BY_KEY.get(c.key);
        return {
          key: c.key,
          label: def?.label ?? c.key,
          threshold: c.threshold,
          remedy: c.remedy,
          source: def?.source ?? "",
        };
      }),
    sensitivity: m.sensitivity.map((s) =>
      s.kind === "alternative_covariates"
        ? `${s.label ?? SENSITIVITY_LABELS[s.kind]}: ${(s.covariates ?? []).join(", ")}`
        : s.kind === "variance_function"
          ? `${SENSITIVITY_LABELS[s.kind]} (${s.varianceBy === "treatment" ? "variance per arm" : "variance depending on the fitted values"})`
          : s.kind === "cox_rmst"
            ? `${SENSITIVITY_LABELS[s.kind]} to τ = ${s.tau}`
            : s.kind === "repeated_structure" && s.structure
              ? `${SENSITIVITY_LABELS[s.kind]}: ${COVARIANCE_STRUCTURE_WORDS[s.structure]}`
              : SENSITIVITY_LABELS[s.kind],
    ),
    published:
      m.spec.family === "cox" || "repeated" in m.spec
        ? []
        : (m.spec.published ?? []).map((v) => publishedInWords(v, treatment?.reference)),
  };
}
