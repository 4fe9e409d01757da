/**
 * The diagnostic checks a plan commits to, and their evaluation on a rerun's result. Each
 * check has a threshold with a default taken from common practice (the source is named), and
 * ends as "within" (within plan) or "finding". Pure: no I/O.
 */
import type { GlmResult } from "./glm/glm-model";
import type { LinearModelResult } from "./linear-model";
import { INTERCEPT_NAME } from "./coefficient-names";
import { COX_CHECKS } from "./survival/cox-check-catalogue";
import { REPEATED_CHECKS } from "./repeated/repeated-check-catalogue";
import { checkApplies } from "./family-applicability";

type ModelResult = LinearModelResult | GlmResult;

export type CheckKey =
  | "cooks_distance"
  | "leverage"
  | "deletion_residual"
  | "dfbetas_treatment"
  | "dffits"
  | "shapiro_wilk"
  | "breusch_pagan"
  | "brown_forsythe"
  | "homogeneity_of_slopes"
  | "reset"
  | "gvif"
  | "overdispersion"
  | "events_per_variable"
  | "linearity_glm"
  | "treatment_homogeneity_glm"
  // time-to-event (Cox) models: app/engine/survival/cox-check-catalogue.ts
  | "proportional_hazards"
  | "functional_form_cox"
  | "dfbetas_treatment_cox"
  | "events_per_coefficient"
  // repeated-measures (MMRM) models: app/engine/repeated/repeated-check-catalogue.ts
  | "repeated_convergence"
  | "repeated_normality"
  | "repeated_spread"
  | "repeated_influence"
  | "repeated_primary_visit";

export interface CheckDefinition {
  key: CheckKey;
  label: string;
  /** What the threshold means, with `k` standing for the plan's number. */
  rule: string;
  defaultThreshold: number;
  /** Where the default comes from. */
  source: string;
  defaultRemedy: string;
  /** The figure that supports the check on the results page (its module in app/figures lists the check), or none. */
  figure: FigureKey | null;
  needsTreatment?: boolean;
  /** Which models the check applies to ("both": linear and generalized linear; "repeated": MMRM). */
  models: "linear" | "glm" | "both" | "cox" | "repeated";
  /** The statistic's formula where its name alone does not say it: a symbol raised to a power, and the same in words. */
  formula?: CheckFormula;
}

/** A formula shown beside a check: `symbol` to the power `exponent` (set as a superscript), and what it means. */
export interface CheckFormula {
  name: string;
  symbol: string;
  exponent: string;
  words: string;
}

export type FigureKey =
  | "influence"
  | "leverage_residual"
  | "qq"
  | "residuals_fitted"
  | "spread_by_arm"
  | "residuals_covariate"
  | "partial_residuals"
  | "dfbetas"
  | "dffits"
  | "gvif"
  | "slopes_by_arm"
  | "binned_residuals"
  | "calibration"
  // time-to-event (Cox) figures: app/figures/cox/
  | "schoenfeld"
  | "martingale_covariate"
  | "kaplan_meier"
  | "log_minus_log"
  | "cox_influence"
  // repeated-measures (MMRM) figures: app/figures/repeated/
  | "repeated_residuals_fitted"
  | "repeated_qq"
  | "repeated_means"
  | "repeated_influence";

export const CHECKS: readonly CheckDefinition[] = [
  {
    key: "cooks_distance",
    models: "both",
    label: "Cook's distance",
    rule: "finding when any subject's Cook's distance exceeds k/n",
    defaultThreshold: 4,
    source: "4/n, a common rule of thumb (Bollen and Jackman 1990)",
    defaultRemedy: "Sensitivity analysis excluding the flagged subjects",
    figure: "influence",
  },
  {
    key: "leverage",
    models: "both",
    label: "Leverage",
    rule: "finding when any subject's leverage exceeds k·p/n",
    defaultThreshold: 2,
    source: "2p/n (Hoaglin and Welsch 1978)",
    defaultRemedy: "Review the flagged subjects' covariate values",
    figure: "leverage_residual",
  },
  {
    key: "deletion_residual",
    models: "both",
    label: "Deletion residual",
    rule: "finding when any subject's deletion residual t is beyond ±k (|t| > k)",
    defaultThreshold: 3,
    source: "|t| > 3, a common screening bound for outlying responses",
    defaultRemedy: "Review the flagged subjects; sensitivity analysis excluding them",
    figure: "leverage_residual",
  },
  {
    key: "dfbetas_treatment",
    models: "both",
    label: "DFBETAS on the treatment effect",
    rule: "finding when any subject's |DFBETAS| on a treatment coefficient exceeds k/√n",
    defaultThreshold: 2,
    source: "2/√n (Belsley, Kuh and Welsch 1980)",
    defaultRemedy: "Sensitivity analysis excluding the flagged subjects",
    figure: "dfbetas",
    needsTreatment: true,
  },
  {
    key: "dffits",
    models: "linear",
    label: "DFFITS",
    rule: "finding when any subject's |DFFITS| exceeds k·√(p/n)",
    defaultThreshold: 2,
    source: "2√(p/n) (Belsley, Kuh and Welsch 1980)",
    defaultRemedy: "Review the flagged subjects",
    figure: "dffits",
  },
  {
    key: "shapiro_wilk",
    models: "linear",
    label: "Normality of residuals (Shapiro–Wilk)",
    rule: "finding when the Shapiro–Wilk p-value is below k; read with the Q-Q plot, since large samples reject tiny departures",
    defaultThreshold: 0.05,
    source: "Shapiro and Wilk 1965; Royston 1995 (AS R94)",
    defaultRemedy: "Robust (HC3) standard errors; judge the Q-Q plot",
    figure: "qq",
  },
  {
    key: "breusch_pagan",
    models: "linear",
    label: "Constant variance (Breusch–Pagan)",
    rule: "finding when the studentized Breusch–Pagan p-value is below k",
    defaultThreshold: 0.05,
    source: "Breusch and Pagan 1979; studentized form, Koenker 1981",
    defaultRemedy: "Robust (HC3) standard errors, or a weighted fit with an estimated variance function",
    figure: "residuals_fitted",
  },
  {
    key: "brown_forsythe",
    models: "linear",
    label: "Equal spread across arms (Brown–Forsythe)",
    rule: "finding when the Brown–Forsythe p-value across treatment arms is below k",
    defaultThreshold: 0.05,
    source: "Brown and Forsythe 1974 (median-centred Levene test)",
    defaultRemedy: "Weighted fit with variance per arm, or robust (HC3) standard errors",
    figure: "spread_by_arm",
    needsTreatment: true,
  },
  {
    key: "homogeneity_of_slopes",
    models: "linear",
    label: "Same covariate slopes in every arm (treatment × continuous covariates)",
    rule: "finding when the joint F test of the treatment × continuous covariate interactions has p below k: a covariate's slope may differ between arms",
    defaultThreshold: 0.05,
    source:
      "Standard ANCOVA assumption check (e.g. EMA guideline on adjustment for baseline covariates, 2015)",
    defaultRemedy: "Report the interaction as a sensitivity analysis; the primary estimate stands as planned",
    figure: "slopes_by_arm",
    needsTreatment: true,
  },
  {
    key: "reset",
    models: "linear",
    label: "Functional form (Ramsey RESET)",
    rule: "finding when the RESET p-value (powers 2 and 3 of the fitted values) is below k",
    defaultThreshold: 0.05,
    source: "Ramsey 1969",
    defaultRemedy: "Inspect the partial-residual plots; consider a transformation of the covariate",
    figure: "partial_residuals",
  },
  {
    key: "gvif",
    models: "both",
    label: "Collinearity (variance inflation, SE scale)",
    rule: "finding when any variable's variance inflation on the SE scale exceeds k (the generalized variance inflation factor raised to the power 1 / (2 df), df the variable's coefficients)",
    defaultThreshold: Math.sqrt(5),
    source:
      "√5, i.e. a variance inflation factor above 5 for a one-column term (Fox and Monette 1992 for the generalized form; per variable together with its interactions, so that an uncentred covariate in an interaction does not read as collinearity)",
    defaultRemedy: "Review the correlated covariates; the treatment estimate is usually unaffected",
    figure: "gvif",
    formula: {
      name: "Variance inflation, SE scale",
      symbol: "GVIF",
      exponent: "1/(2df)",
      words:
        "the generalized variance inflation factor of a variable with its interactions (Fox and Monette 1992) raised to the power 1/(2df), df being its number of coefficients: for a one-coefficient term, the factor by which collinearity widens the standard error",
    },
  },
  {
    key: "overdispersion",
    label: "Overdispersion",
    rule: "finding when the Pearson χ²/df ratio of a count model exceeds k",
    defaultThreshold: 1.5,
    source:
      "ratio above 1.5, a common screening bound (e.g. Hilbe 2011, Negative Binomial Regression, section 7.2)",
    defaultRemedy: "Quasi-Poisson or negative binomial sensitivity analysis",
    figure: "residuals_fitted",
    models: "glm",
  },
  {
    key: "events_per_variable",
    label: "Events per variable",
    rule: "finding when the smaller outcome class (events, or non-events if rarer) has fewer than k subjects per estimated coefficient",
    defaultThreshold: 10,
    source: "10 events per variable (Peduzzi et al. 1996)",
    defaultRemedy: "Report the estimates with caution; consider a reduced covariate set",
    figure: null,
    models: "glm",
  },
  {
    key: "linearity_glm",
    label: "Linearity on the link scale",
    rule: "finding when a likelihood-ratio test of an added quadratic term has p below k for any continuous covariate",
    defaultThreshold: 0.05,
    source:
      "Likelihood-ratio test of a quadratic term (e.g. Harrell 2015, Regression Modeling Strategies, section 2.4)",
    defaultRemedy: "Inspect the partial-residual plots; consider a spline or transformation",
    figure: "partial_residuals",
    models: "glm",
  },
  {
    key: "treatment_homogeneity_glm",
    label: "Same treatment effect across covariate values (treatment × every covariate)",
    rule: "finding when the joint likelihood-ratio test of the treatment's interactions with every covariate (continuous and categorical) has p below k: the treatment effect may depend on a covariate",
    defaultThreshold: 0.05,
    source: "Likelihood-ratio test of the interactions (standard practice for covariate-adjusted GLMs)",
    defaultRemedy: "Report the interaction as a sensitivity analysis; the primary estimate stands as planned",
    figure: "slopes_by_arm",
    needsTreatment: true,
    models: "glm",
  },
  ...COX_CHECKS,
  ...REPEATED_CHECKS,
];

export const CHECK_BY_KEY: ReadonlyMap<CheckKey, CheckDefinition> = new Map(CHECKS.map((c) => [c.key, c]));

/** A check as a plan states it. */
export interface PlannedCheck {
  key: CheckKey;
  enabled: boolean;
  threshold: number;
  remedy: string;
}

/** The checks a new planned model starts with: every check that applies to its kind of model. */
export function defaultChecks(hasTreatment: boolean, family = "gaussian"): PlannedCheck[] {
  return CHECKS.filter((c) => checkApplies(c, family, hasTreatment)).map((c) => ({
    key: c.key,
    enabled: true,
    threshold: c.defaultThreshold,
    remedy: c.defaultRemedy,
  }));
}

/** One flagged subject: rank 1 is the most extreme. */
export interface FlaggedObservation {
  rank: number;
  /** The subject's data row (1-based); for a subject with several records, its first. */
  row: number;
  id: string | null;
  value: number;
  /** A subject with several records (repeated measures): the data rows of all of them, ascending. */
  rows?: number[];
}

/** A check's numbers, for machines: what the statistic is, its value, the threshold as applied, and the p-value of a test. */
export interface CheckNumbers {
  /** What `statistic` is, in words ("Shapiro–Wilk statistic", "largest Cook's distance"). */
  measure: string;
  statistic: number | null;
  /** Degrees of freedom of a test statistic (one for χ², two for F), or null. */
  df: number[] | null;
  /** The bound the check compares with: the worked-out threshold (4/n = 0.0095), or the planned level for a p-value. */
  threshold: number;
  /** Whether the statistic or the p-value is compared with the threshold, and which side is a finding. */
  compares: "statistic above" | "statistic below" | "p below";
  p: number | null;
}

export interface CheckOutcome {
  key: CheckKey;
  label: string;
  outcome: "within" | "finding" | "not_computed";
  /** The statistic in words and figures, e.g. "max Cook's distance 0.322 (subject QMT301-0217)". */
  statistic: string;
  /** The threshold as applied, e.g. "4/n = 0.0095". */
  threshold: string;
  summary: string;
  remedy: string;
  figure: FigureKey | null;
  flagged?: FlaggedObservation[];
  value?: number | null;
  /** The numbers behind `statistic` and `threshold`, absent in results stored before they were recorded. */
  numbers?: CheckNumbers;
}

/** A check's number in words: fixed decimals, exponent form when very small or large, "—" when undefined. */
export const fmt = (x: number, digits = 3): string => {
  if (!Number.isFinite(x)) return "—";
  const a = Math.abs(x);
  if (a !== 0 && (a < 0.001 || a >= 1e5)) return x.toExponential(2);
  return x.toFixed(digits);
};

/** A plan's threshold number as written: 4, 2, 0.05, 2.236. */
export const kText = (k: number): string => String(Number(k.toPrecision(4)));

/** A planned check that could not be computed on this rerun, with the reason in `summary`. */
export function notComputed(
  def: CheckDefinition,
  pc: PlannedCheck,
  threshold: string,
  summary: string,
): CheckOutcome {
  return {
    key: def.key,
    label: def.label,
    outcome: "not_computed",
    statistic: "not computed",
    threshold,
    summary,
    remedy: pc.remedy,
    figure: def.figure,
    value: null,
  };
}

export const formatP = (p: number | null | undefined): string =>
  p === null || p === undefined || !Number.isFinite(p) ? "—" : p < 0.0001 ? "< 0.0001" : p.toFixed(4);

function flagged(
  values: number[],
  rows: number[],
  ids: (string | null)[],
  bound: number,
  useAbs: boolean,
): FlaggedObservation[] {
  const out: { row: number; id: string | null; value: number }[] = [];
  // plain loops over the per-subject values (a callback per element boxed each number read)
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    const m = useAbs ? Math.abs(v) : v;
    if (Number.isFinite(m) && m > bound) out.push({ row: rows[i], id: ids[i], value: v });
  }
  out.sort((a, b) => (useAbs ? Math.abs(b.value) - Math.abs(a.value) : b.value - a.value) || a.row - b.row);
  return out.map((o, i) => ({ rank: i + 1, ...o }));
}

function subject(o: { id: string | null; row: number }): string {
  return o.id ? `subject ${o.id}` : `row ${o.row}`;
}

/** "p = 0.0123" or "p < 0.0001". */
export const pWords = (p: number): string => (p < 0.0001 ? "p < 0.0001" : `p = ${p.toFixed(4)}`);

/** "(χ² with 3 degrees of freedom)", "(F with 2 and 490 degrees of freedom)". */
export function distributionWords(kind: "χ²" | "F", df: readonly number[]): string {
  const d = df.map((x) => kText(x));
  return `(${kind} with ${d.join(" and ")} degree${d.length === 1 && d[0] === "1" ? "" : "s"} of freedom)`;
}

/**
 * A check over subjects. `what` names the statistic ("Cook's distance"); with `useAbs` the size
 * is read without its sign and the text says "largest absolute …", printing the absolute value and
 * the sign in words.
 */
function observationCheck(
  def: CheckDefinition,
  planned: PlannedCheck,
  values: number[],
  bound: number,
  thresholdText: string,
  useAbs: boolean,
  r: ModelResult,
  what: string,
): CheckOutcome {
  const obs = r.observations;
  const list = flagged(values, obs.row, obs.id, bound, useAbs);
  let maxIndex = -1;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    const m = useAbs ? Math.abs(v) : v;
    if (Number.isFinite(m) && (maxIndex < 0 || m > (useAbs ? Math.abs(values[maxIndex]) : values[maxIndex])))
      maxIndex = i;
  }
  const max = maxIndex >= 0 ? values[maxIndex] : NaN;
  const who = maxIndex >= 0 ? subject({ id: obs.id[maxIndex], row: obs.row[maxIndex] }) : "";
  const measure = `largest ${useAbs ? "absolute " : ""}${what}`;
  const sign = useAbs && Number.isFinite(max) && max !== 0 ? (max < 0 ? ", negative" : ", positive") : "";
  return {
    key: def.key,
    label: def.label,
    outcome: list.length > 0 ? "finding" : "within",
    statistic: `${measure} ${fmt(useAbs ? Math.abs(max) : max)}${sign}${who ? ` (${who})` : ""}`,
    threshold: thresholdText,
    summary:
      list.length > 0
        ? `${list.length} of ${r.n} subjects exceed the threshold; the most extreme is ${subject(list[0])}.`
        : `No subject exceeds the threshold.`,
    remedy: planned.remedy,
    figure: def.figure,
    flagged: list,
    value: max,
    numbers: {
      measure,
      statistic: Number.isFinite(max) ? (useAbs ? Math.abs(max) : max) : null,
      df: null,
      threshold: bound,
      compares: "statistic above",
      p: null,
    },
  };
}

/** A test's statistic and p-value as a check reads them (`reason` when it could not be computed). */
interface TestReading {
  p: number | null;
  statistic: number | null;
  reason?: string;
}

/**
 * A check that is a test: the finding is a p-value below the planned level. `measure` names the
 * statistic in words ("Shapiro–Wilk statistic"); `distribution` says what it is referred to.
 */
function pCheck(
  def: CheckDefinition,
  planned: PlannedCheck,
  test: TestReading | undefined,
  measure: string,
  distribution?: { kind: "χ²" | "F"; df: number[] },
): CheckOutcome {
  if (!test || test.p === null || test.statistic === null) {
    return {
      key: def.key,
      label: def.label,
      outcome: "not_computed",
      statistic: "not computed",
      threshold: `p < ${planned.threshold}`,
      summary: test?.reason ? `Not computed: ${test.reason}.` : "Not computed for this model.",
      remedy: planned.remedy,
      figure: def.figure,
      value: null,
    };
  }
  const finding = test.p < planned.threshold;
  const df = distribution && distribution.df.every((d) => Number.isFinite(d)) ? distribution.df : null;
  return {
    key: def.key,
    label: def.label,
    outcome: finding ? "finding" : "within",
    statistic: `${measure} ${fmt(test.statistic)}${distribution && df ? ` ${distributionWords(distribution.kind, df)}` : ""}, ${pWords(test.p)}`,
    threshold: `p < ${planned.threshold}`,
    summary: finding
      ? `The test rejects at the planned level.`
      : `The test does not reject at the planned level.`,
    remedy: planned.remedy,
    figure: def.figure,
    value: test.p,
    numbers: {
      measure,
      statistic: test.statistic,
      df,
      threshold: planned.threshold,
      compares: "p below",
      p: test.p,
    },
  };
}

/** The degrees of freedom of an F test as the engine stores them. */
const fDf = (t: { df1: number | null; df2: number | null } | null | undefined) =>
  t && t.df1 !== null && t.df2 !== null ? { kind: "F" as const, df: [t.df1, t.df2] } : undefined;

/** The coefficient indices of the treatment term (its non-reference levels). */
function treatmentCoefficients(r: ModelResult): number[] {
  const t = r.spec.treatment;
  if (!t) return [];
  return r.coefficients.flatMap((c, i) => (c.term === t ? [i] : []));
}

function notApplicable(def: CheckDefinition, pc: PlannedCheck, kind: "linear" | "glm"): CheckOutcome {
  return {
    key: def.key,
    label: def.label,
    outcome: "not_computed",
    statistic: "not computed",
    threshold: String(pc.threshold),
    summary:
      kind === "glm"
        ? "Not computed: this check applies to linear models; the model is a generalized linear model."
        : "Not computed: this check applies to generalized linear models.",
    remedy: pc.remedy,
    figure: def.figure,
    value: null,
  };
}

/**
 * A finding's one-line summary: the check's label, then what the check found, without saying the
 * label twice when the check's own words already begin with it ("Overdispersion: Overdispersion:
 * …" reads "Overdispersion: …"). Applied again to a stored summary it changes nothing more than the
 * repeat, so summaries stored before are shown the same way.
 */
export function findingSummary(label: string, summary: string): string {
  const text = summary.trim();
  const starts = (prefix: string) => text.toLowerCase().startsWith(prefix.toLowerCase());
  return starts(`${label}:`) || starts(`${label} `) ? text : `${label}: ${text}`;
}

/** A finding's summary for a table whose own column already names the check: the label dropped from its start. */
export function summaryAfterLabel(label: string, summary: string): string {
  const text = withoutRepeatedLabel(summary);
  const prefix = `${label}: `;
  if (!text.toLowerCase().startsWith(prefix.toLowerCase())) return text;
  const rest = text.slice(prefix.length);
  return rest.charAt(0).toUpperCase() + rest.slice(1);
}

/** A stored finding summary with a label said twice at its start ("X: X: …") said once. */
export function withoutRepeatedLabel(summary: string): string {
  return summary.replace(/^([^:]{1,120}):\s+\1:\s+/i, "$1: ");
}

/** Evaluates every enabled check of the plan on a rerun's result (linear or generalized linear). */
export function evaluateChecks(r: ModelResult, planned: readonly PlannedCheck[]): CheckOutcome[] {
  const n = r.n;
  const p = r.rank;
  const obs = r.observations;
  const out: CheckOutcome[] = [];
  for (const pc of planned) {
    if (!pc.enabled) continue;
    const def = CHECK_BY_KEY.get(pc.key);
    if (!def) continue;
    const k = pc.threshold;
    if (def.models === "cox") continue;
    // a check the family cannot have (overdispersion of a 0/1 response) is not offered, so not evaluated
    if (def.models === r.kind && !checkApplies(def, r.spec.family)) continue;
    if (def.models !== "both" && def.models !== r.kind) {
      out.push(notApplicable(def, pc, r.kind));
      continue;
    }
    if (r.kind === "glm") {
      const glm = evaluateGlmCheck(def, pc, r);
      if (glm) {
        out.push(glm);
        continue;
      }
    }
    if (r.kind !== "linear" && def.models === "linear") continue;
    switch (pc.key) {
      case "cooks_distance":
        out.push(
          observationCheck(
            def,
            pc,
            obs.cooksDistance,
            k / n,
            `${kText(k)}/n = ${fmt(k / n, 4)}`,
            false,
            r,
            "Cook's distance",
          ),
        );
        break;
      case "leverage":
        out.push(
          observationCheck(
            def,
            pc,
            obs.leverage,
            (k * p) / n,
            `${kText(k)}·p/n = ${fmt((k * p) / n, 4)}`,
            false,
            r,
            "leverage",
          ),
        );
        break;
      case "deletion_residual":
        out.push(
          observationCheck(
            def,
            pc,
            obs.studentizedExternal,
            k,
            `|t| > ${kText(k)}`,
            true,
            r,
            "deletion residual",
          ),
        );
        break;
      case "dffits":
        if (r.kind !== "linear") break;
        out.push(
          observationCheck(
            def,
            pc,
            r.observations.dffits,
            k * Math.sqrt(p / n),
            `${kText(k)}·√(p/n) = ${fmt(k * Math.sqrt(p / n), 4)}`,
            true,
            r,
            "DFFITS",
          ),
        );
        break;
      case "dfbetas_treatment": {
        const idx = treatmentCoefficients(r);
        if (idx.length === 0) {
          out.push({
            ...pCheck(def, pc, undefined, ""),
            threshold: `${kText(k)}/√n`,
            summary: "Not computed: the model names no treatment.",
          });
          break;
        }
        // Per subject, the largest |DFBETAS| over the treatment coefficients.
        const worst = new Array<number>(obs.row.length).fill(0);
        for (const j of idx) {
          const column = obs.dfbetas[j];
          for (let i = 0; i < worst.length; i++)
            if (Math.abs(column[i]) > Math.abs(worst[i])) worst[i] = column[i];
        }
        out.push(
          observationCheck(
            def,
            pc,
            worst,
            k / Math.sqrt(n),
            `${kText(k)}/√n = ${fmt(k / Math.sqrt(n), 4)}`,
            true,
            r,
            "DFBETAS on the treatment effect",
          ),
        );
        break;
      }
      case "shapiro_wilk":
        out.push(
          pCheck(def, pc, r.kind === "linear" ? r.tests.shapiroWilk : undefined, "Shapiro–Wilk statistic"),
        );
        break;
      case "breusch_pagan": {
        const t = r.kind === "linear" ? r.tests.breuschPagan : undefined;
        out.push(
          pCheck(
            def,
            pc,
            t,
            "Breusch–Pagan statistic",
            t && t.df !== null ? { kind: "χ²", df: [t.df] } : undefined,
          ),
        );
        break;
      }
      case "brown_forsythe": {
        const t = r.kind === "linear" ? r.tests.brownForsythe : undefined;
        out.push(pCheck(def, pc, t, "Brown–Forsythe statistic", fDf(t)));
        break;
      }
      case "homogeneity_of_slopes": {
        const t = r.kind === "linear" ? r.tests.homogeneityOfSlopes : undefined;
        out.push(pCheck(def, pc, t ?? undefined, "Statistic for equal slopes across arms", fDf(t)));
        break;
      }
      case "reset": {
        const t = r.kind === "linear" ? r.tests.reset : undefined;
        out.push(pCheck(def, pc, t, "RESET statistic", fDf(t)));
        break;
      }
      case "gvif": {
        // predictor-wise: the term-wise value of a treatment that interacts with an uncentred
        // covariate is large without any collinearity
        const rows = r.vifByPredictor.map((v) => ({ term: v.predictor, adjusted: v.adjusted }));
        if (rows.length === 0) {
          out.push({
            ...pCheck(def, pc, undefined, ""),
            threshold: `> ${fmt(k)}`,
            summary: "Not computed: fewer than two terms.",
          });
          break;
        }
        const worst = rows.reduce((a, b) => (b.adjusted > a.adjusted ? b : a));
        const over = rows.filter((v) => v.adjusted > k);
        out.push({
          key: def.key,
          label: def.label,
          outcome: over.length > 0 ? "finding" : "within",
          statistic: `largest variance inflation on the SE scale ${fmt(worst.adjusted)} (${worst.term})`,
          threshold: `> ${fmt(k)}`,
          summary:
            over.length > 0
              ? `${over.map((v) => v.term).join(", ")} exceed the threshold.`
              : "No term exceeds the threshold.",
          remedy: pc.remedy,
          figure: def.figure,
          value: worst.adjusted,
          numbers: {
            measure: "largest variance inflation on the SE scale",
            statistic: worst.adjusted,
            df: null,
            threshold: k,
            compares: "statistic above",
            p: null,
          },
        });
        break;
      }
    }
  }
  return out;
}

/**
 * What a nested-model statistic of a GLM is referred to: χ² on the added columns, or F on them and
 * the larger model's residual df when the dispersion is estimated (glm-checks.ts likelihoodRatio).
 */
function lrDistribution(r: GlmResult, df: number | null): { kind: "χ²" | "F"; df: number[] } | undefined {
  if (df === null) return undefined;
  return r.family === "quasipoisson" ? { kind: "F", df: [df, r.dfResidual - df] } : { kind: "χ²", df: [df] };
}

/** The checks that read a generalized linear model's own results; null for the shared ones. */
function evaluateGlmCheck(def: CheckDefinition, pc: PlannedCheck, r: GlmResult): CheckOutcome | null {
  const k = pc.threshold;
  const base = { key: def.key, label: def.label, remedy: pc.remedy, figure: def.figure };
  switch (pc.key) {
    case "overdispersion": {
      const o = r.checks.overdispersion;
      if (o.ratio === null)
        return {
          ...base,
          outcome: "not_computed",
          statistic: "not computed",
          threshold: `> ${kText(k)}`,
          summary: o.reading,
          value: null,
        };
      const finding = o.ratio > k;
      const measure = "dispersion ratio (Pearson χ² per residual degree of freedom)";
      return {
        ...base,
        outcome: finding ? "finding" : "within",
        statistic: `${measure} ${fmt(o.ratio, 2)}${o.p !== null ? `, ${pWords(o.p)}` : ""}`,
        threshold: `> ${kText(k)}`,
        summary: o.reading,
        value: o.ratio,
        numbers: {
          measure,
          statistic: o.ratio,
          df: o.df !== null ? [o.df] : null,
          threshold: k,
          compares: "statistic above",
          p: o.p,
        },
      };
    }
    case "events_per_variable": {
      const finding = r.eventsPerVariable < k;
      const coefficients = Math.max(1, r.coefficients.filter((c) => c.name !== INTERCEPT_NAME).length);
      // binomial: the smaller of the two outcome classes counts (glm-model.ts); counts: the events
      const nonEvents = r.family === "binomial" ? r.n - r.events : null;
      const smaller = nonEvents !== null && nonEvents < r.events ? "non-events" : "events";
      const classes =
        nonEvents === null
          ? `${fmt(r.events, 0)} events, ${coefficients} coefficients besides the intercept`
          : `${smaller === "non-events" ? `${nonEvents} non-events against ${r.events} events` : `${r.events} events against ${nonEvents} non-events`}, ${coefficients} coefficients besides the intercept`;
      const measure =
        nonEvents === null
          ? "events per estimated coefficient"
          : `${smaller} (the smaller class) per estimated coefficient`;
      return {
        ...base,
        outcome: finding ? "finding" : "within",
        statistic: `${fmt(r.eventsPerVariable, 1)} ${measure} (${classes})`,
        threshold: `< ${kText(k)}`,
        summary: finding
          ? `Fewer ${smaller} per coefficient than planned: estimates may be biased away from zero and intervals too narrow.`
          : `Enough ${smaller} per estimated coefficient.`,
        value: r.eventsPerVariable,
        numbers: {
          measure,
          statistic: r.eventsPerVariable,
          df: null,
          threshold: k,
          compares: "statistic below",
          p: null,
        },
      };
    }
    case "linearity_glm": {
      const tests = r.checks.linearity.filter((t) => t.p !== null);
      if (tests.length === 0)
        return {
          ...base,
          outcome: "not_computed",
          statistic: "not computed",
          threshold: `p < ${kText(k)}`,
          summary: "Not computed: the model has no continuous covariate.",
          value: null,
        };
      const worst = tests.reduce((a, b) => ((b.p ?? 1) < (a.p ?? 1) ? b : a));
      const over = tests.filter((t) => (t.p ?? 1) < k);
      const dist = lrDistribution(r, worst.df);
      return {
        ...base,
        outcome: over.length ? "finding" : "within",
        statistic: `smallest ${pWords(worst.p!)} (${worst.term}: likelihood-ratio statistic ${fmt(worst.statistic ?? NaN, 2)}${dist ? ` ${distributionWords(dist.kind, dist.df)}` : ""})`,
        threshold: `p < ${kText(k)}`,
        summary: over.length
          ? `A quadratic term improves the fit for ${over.map((t) => t.term).join(", ")}: the effect may not be linear on the link scale.`
          : "No continuous covariate departs from linearity on the link scale.",
        value: worst.p,
        numbers: {
          measure: `likelihood-ratio statistic of the quadratic term, ${worst.term}`,
          statistic: worst.statistic,
          df: dist?.df ?? null,
          threshold: k,
          compares: "p below",
          p: worst.p,
        },
      };
    }
    case "treatment_homogeneity_glm": {
      const joint = r.checks.homogeneityOfTreatmentEffect?.joint;
      return pCheck(
        def,
        pc,
        joint,
        "Likelihood-ratio statistic of the treatment interactions",
        lrDistribution(r, joint?.df ?? null),
      );
    }
    default:
      return null;
  }
}
