/**
 * The methods section in plain statistical prose, written from the planned model as the
 * approved plan version states it (and the rerun's own method description). Pure.
 */
import { interactionName } from "~/engine/coefficient-names";
import { familyWords, linkWords } from "~/engine/family-names";
import { CHECK_BY_KEY, type PlannedCheck } from "~/engine/checks";
import { CANONICAL_LINK, type ModelSpec } from "~/engine/model-spec";
import type { CoxSpec } from "~/engine/survival/cox-spec";
import type { RepeatedSpec } from "~/engine/repeated/repeated-spec";
import { coxMethodsParagraphs } from "./cox-methods";
import { repeatedMethodsParagraphs } from "./repeated-methods";
import { MULTIPLICITY_NAMES } from "~/engine/multiplicity";
import { describeCondition, type PopulationCondition } from "~/engine/population";
import { SENSITIVITY_LABELS, type PlannedSensitivity } from "../plans/planned-model";

export interface MethodsInput {
  title: string;
  datasetName: string;
  /** The population conditions (empty: every record). */
  population: readonly PopulationCondition[];
  spec: ModelSpec | CoxSpec | RepeatedSpec;
  checks: PlannedCheck[];
  sensitivity: PlannedSensitivity[];
  /** Column labels of the locked dataset, by column name. */
  labels: Record<string, string | null>;
  meansWeighting: "equal" | "proportional" | null;
  sap: { name: string | null; version: string | null; date: string | null };
}

const thresholdWords = (c: PlannedCheck): string => {
  const def = CHECK_BY_KEY.get(c.key);
  if (!def) return "";
  const k = String(Number(c.threshold.toPrecision(4)));
  return def.rule.replace(/\bk\b/g, k);
};

function named(col: string, labels: Record<string, string | null>): string {
  const label = labels[col];
  return label ? `${label} (${col})` : col;
}

function list(items: string[]): string {
  if (items.length <= 1) return items.join("");
  return `${items.slice(0, -1).join(", ")} and ${items[items.length - 1]}`;
}

const isRepeated = (s: MethodsInput["spec"]): s is RepeatedSpec => "repeated" in s;

/** Paragraphs and bullet lists of the methods section, in reading order. */
export function methodsProse(m: MethodsInput): {
  paragraphs: string[];
  checks: string[];
  sensitivity: string[];
} {
  const s = m.spec;
  const main = s.terms.filter(
    (t): t is { variable: string; categorical?: boolean; reference?: string } => "variable" in t,
  );
  const treatment = main.find((t) => t.variable === s.treatment);
  const covariates = main.filter((t) => t.variable !== s.treatment);
  const interactions = s.terms.flatMap((t) => ("interaction" in t ? [interactionName(t.interaction)] : []));
  const paragraphs: string[] = [];

  const sap = m.sap.name
    ? ` as pre-specified in ${m.sap.name}${m.sap.version ? ` version ${m.sap.version}` : ""}${m.sap.date ? ` (${m.sap.date})` : ""}`
    : "";
  paragraphs.push(
    `The planned model "${m.title}" was fitted to the locked dataset ${m.datasetName}${sap}. ` +
      (m.population.length > 0
        ? `The analysis population consisted of the records meeting every one of these conditions: ${list(m.population.map((c) => describeCondition({ ...c, column: named(c.column, m.labels) })))}.`
        : "All records of the dataset formed the analysis population."),
  );
  if (s.family === "cox") paragraphs.push(...coxMethodsParagraphs(s, (col) => named(col, m.labels), list));
  else if (isRepeated(s))
    paragraphs.push(...repeatedMethodsParagraphs(s, (col) => named(col, m.labels), list));
  else {
    paragraphs.push(
      `The endpoint was ${named(s.response, m.labels)}. ` +
        (s.family === "gaussian"
          ? `It was analysed with a linear model (normal errors, identity link) estimated by ${s.weights ? `weighted least squares with prior weights from ${s.weights}` : "ordinary least squares"}`
          : `It was analysed with a generalized linear model (${familyWords(s.family).toLowerCase()} distribution, ${linkWords(s.link ?? CANONICAL_LINK[s.family])} link) estimated by maximum likelihood${s.weights ? ` with prior weights from ${s.weights}` : ""}`) +
        `${s.intercept === false ? " without an intercept" : ""}${s.offset ? `, with ${s.offset} entered as an offset` : ""}. ` +
        "Records with a missing value in the endpoint or in any model term were left out (complete-case analysis).",
    );
    if (treatment) {
      paragraphs.push(
        `Treatment was entered as ${named(treatment.variable, m.labels)}, a categorical factor with ${treatment.reference ? `"${treatment.reference}"` : "its first level"} as the reference arm.` +
          (covariates.length
            ? ` The model adjusted for ${list(covariates.map((c) => `${named(c.variable, m.labels)} (${c.categorical ? `categorical${c.reference ? `, reference "${c.reference}"` : ""}` : "continuous"})`))}.`
            : " No covariates were pre-specified.") +
          (interactions.length ? ` Interactions pre-specified: ${list(interactions)}.` : ""),
      );
      const pairwise = s.contrasts === "pairwise";
      const compared = pairwise
        ? "Every pair of arms was compared"
        : "Each arm was compared with the reference arm";
      const multiplicity = s.multiplicity ?? "none";
      const adjustment =
        multiplicity === "none"
          ? " No adjustment for multiplicity was pre-specified."
          : ` The p-values of the treatment contrasts were adjusted for multiplicity by the ${MULTIPLICITY_NAMES[multiplicity]} method${multiplicity === "holm" ? " (Holm 1979)" : multiplicity === "hochberg" ? " (Hochberg 1988)" : ""} within the family of ${pairwise ? "pairwise" : "reference-arm"} contrasts${s.family !== "gaussian" ? " of each measure" : ""}; adjusted p-values are reported beside the unadjusted ones.`;
      const overall = interactions.some((i) => i.split(" by ").includes(treatment.variable))
        ? ""
        : s.family === "gaussian"
          ? " The treatment term as a whole was tested by the F test of its coefficients (equal to the partial F test of dropping the term)."
          : " The treatment term as a whole was tested by the likelihood-ratio χ² test of the model against the model without it.";
      if (s.family !== "gaussian") {
        paragraphs.push(
          `${compared} by marginal (standardized) contrasts: the model's predicted response for every analysed subject was averaged with the subject assigned to each arm in turn, and the arms' averages were compared as differences and ratios with two-sided 95% confidence intervals.` +
            overall +
            adjustment,
        );
      } else
        paragraphs.push(
          "Adjusted means of the endpoint per arm were computed from the fitted model with continuous covariates held at their mean over the records analysed" +
            (m.meansWeighting === "proportional"
              ? " and categorical covariates averaged in proportion to their observed frequencies"
              : " and categorical covariates averaged with equal weight over their levels") +
            ` (population marginal means, Searle, Speed and Milliken 1980). ${compared} by the difference in adjusted means with a two-sided 95% confidence interval and p-value from the t distribution on the residual degrees of freedom.` +
            overall +
            adjustment,
        );
    } else if (covariates.length) {
      paragraphs.push(`The model's terms were ${list(covariates.map((c) => named(c.variable, m.labels)))}.`);
    }
  }
  paragraphs.push(
    "The plan committed to the diagnostic checks below, each with a threshold fixed before the data were seen. A check whose statistic crossed its threshold was recorded as a finding; every finding was assessed and documented as a deviation before the rerun was signed.",
  );
  const published = s.family === "cox" ? 0 : (s.published?.length ?? 0);
  if (published > 0) {
    paragraphs.push(
      `The plan listed ${published === 1 ? "one value" : `${published} values`} printed in the clinical study report for this model. The rerun's own value for each was rounded to the number of decimals printed, half away from zero, and compared with the printed value (a p-value printed as a bound, such as "<0.001", was reproduced when the rerun's p-value was below it). A value not reproduced was a finding of the reproduction check, assessed like the findings of the diagnostic checks.`,
    );
  }
  const checks = m.checks
    .filter((c) => c.enabled)
    .map((c) => {
      const def = CHECK_BY_KEY.get(c.key);
      return `${def?.label ?? c.key}: ${thresholdWords(c)}. Source of the threshold: ${def?.source ?? "the plan"}. Planned remedy: ${c.remedy}.`;
    });
  const sensitivity = m.sensitivity.map((x): string => {
    switch (x.kind) {
      case "alternative_covariates":
        return `${x.label ?? SENSITIVITY_LABELS[x.kind]}: the treatment with ${list(x.covariates ?? []) || "no covariates"}.`;
      case "variance_function":
        return `${SENSITIVITY_LABELS[x.kind]}, the variance ${x.varianceBy === "treatment" ? "estimated separately for each arm" : "modelled as a function of the fitted values"}.`;
      case "robust_hc3":
        return `${SENSITIVITY_LABELS[x.kind]}: the same estimates with heteroscedasticity-consistent standard errors (HC3, MacKinnon and White 1985).`;
      case "exclude_influential":
        return `${SENSITIVITY_LABELS[x.kind]}: the model refitted without the subjects whose Cook's distance exceeded the planned threshold.`;
      case "cox_robust_subject":
        return `${SENSITIVITY_LABELS[x.kind]}: the same log hazard ratios with the sandwich variance summed over each subject's rows (Lin and Wei 1989).`;
      case "cox_rmst":
        return `${SENSITIVITY_LABELS[x.kind]} up to τ = ${x.tau}: the area under each arm's Kaplan–Meier curve to τ, the difference with the Greenwood-type variance of each area and a Wald 95% interval.`;
      case "repeated_structure":
        return `${SENSITIVITY_LABELS[x.kind]}: the repeated-measures model refitted with another covariance structure of the visits, its treatment contrasts beside the primary ones.`;
      case "cox_unstratified":
        return `${SENSITIVITY_LABELS[x.kind]}: the Cox model refitted without its strata.`;
      default:
        return `${SENSITIVITY_LABELS[(x as PlannedSensitivity).kind] ?? (x as PlannedSensitivity).kind}.`;
    }
  });
  return { paragraphs, checks, sensitivity };
}
