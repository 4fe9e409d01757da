/**
 * The diagnostic checks a plan commits to, and their evaluation on a rerun's result. Each
 * check has a threshold with a default taken from common practice (the source is named), and
 * ends as "within" (within plan) or "finding". Pure: no I/O.
 */
import type { LinearModelResult } from "./linear-model";

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
  | "gvif";

export interface CheckDefinition {
  key: CheckKey;
  label: string;
  /** What the threshold means, with `k` standing for the plan's number. */
  rule: string;
  defaultThreshold: number;
  /** Where the default comes from. */
  source: string;
  defaultRemedy: string;
  /** The figure that supports the check on the results page. */
  figure: FigureKey;
  needsTreatment?: boolean;
}

export type FigureKey =
  | "influence"
  | "leverage_residual"
  | "qq"
  | "residuals_fitted"
  | "spread_by_arm"
  | "residuals_covariate"
  | "partial_residuals";

export const CHECKS: readonly CheckDefinition[] = [
  {
    key: "cooks_distance",
    label: "Cook's distance",
    rule: "finding when any subject's Cook's distance exceeds k/n",
    defaultThreshold: 4,
    source: "4/n, a common rule of thumb (Bollen and Jackman 1990)",
    defaultRemedy: "Sensitivity analysis excluding the flagged subjects",
    figure: "influence",
  },
  {
    key: "leverage",
    label: "Leverage",
    rule: "finding when any subject's leverage exceeds k·p/n",
    defaultThreshold: 2,
    source: "2p/n (Hoaglin and Welsch 1978)",
    defaultRemedy: "Review the flagged subjects' covariate values",
    figure: "leverage_residual",
  },
  {
    key: "deletion_residual",
    label: "Deletion residual",
    rule: "finding when any subject's |deletion residual| exceeds k",
    defaultThreshold: 3,
    source: "|t| > 3, a common screening bound for outlying responses",
    defaultRemedy: "Review the flagged subjects; sensitivity analysis excluding them",
    figure: "leverage_residual",
  },
  {
    key: "dfbetas_treatment",
    label: "DFBETAS on the treatment effect",
    rule: "finding when any subject's |DFBETAS| on a treatment coefficient exceeds k/√n",
    defaultThreshold: 2,
    source: "2/√n (Belsley, Kuh and Welsch 1980)",
    defaultRemedy: "Sensitivity analysis excluding the flagged subjects",
    figure: "influence",
    needsTreatment: true,
  },
  {
    key: "dffits",
    label: "DFFITS",
    rule: "finding when any subject's |DFFITS| exceeds k·√(p/n)",
    defaultThreshold: 2,
    source: "2√(p/n) (Belsley, Kuh and Welsch 1980)",
    defaultRemedy: "Review the flagged subjects",
    figure: "influence",
  },
  {
    key: "shapiro_wilk",
    label: "Normality of residuals (Shapiro–Wilk)",
    rule: "finding when the Shapiro–Wilk p-value is below k; read with the Q-Q plot, since large samples reject tiny departures",
    defaultThreshold: 0.05,
    source: "Shapiro and Wilk 1965; Royston 1995 (AS R94)",
    defaultRemedy: "Robust (HC3) standard errors; judge the Q-Q plot",
    figure: "qq",
  },
  {
    key: "breusch_pagan",
    label: "Constant variance (Breusch–Pagan)",
    rule: "finding when the studentized Breusch–Pagan p-value is below k",
    defaultThreshold: 0.05,
    source: "Breusch and Pagan 1979; studentized form, Koenker 1981",
    defaultRemedy: "Robust (HC3) standard errors, or a weighted fit with an estimated variance function",
    figure: "residuals_fitted",
  },
  {
    key: "brown_forsythe",
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
    label: "Homogeneity of slopes",
    rule: "finding when the joint F test of treatment-by-covariate interactions has p below k",
    defaultThreshold: 0.05,
    source: "Standard ANCOVA assumption check (e.g. EMA guideline on adjustment for baseline covariates, 2015)",
    defaultRemedy: "Report the interaction as a sensitivity analysis; the primary estimate stands as planned",
    figure: "residuals_covariate",
    needsTreatment: true,
  },
  {
    key: "reset",
    label: "Functional form (Ramsey RESET)",
    rule: "finding when the RESET p-value (powers 2 and 3 of the fitted values) is below k",
    defaultThreshold: 0.05,
    source: "Ramsey 1969",
    defaultRemedy: "Inspect the partial-residual plots; consider a transformation of the covariate",
    figure: "partial_residuals",
  },
  {
    key: "gvif",
    label: "Collinearity (GVIF)",
    rule: "finding when any term's GVIF^(1/(2·df)) exceeds k",
    defaultThreshold: Math.sqrt(5),
    source: "√5, i.e. VIF above 5 for a one-column term (Fox and Monette 1992 for the generalized form)",
    defaultRemedy: "Review the correlated covariates; the treatment estimate is usually unaffected",
    figure: "residuals_covariate",
  },
];

export const CHECK_BY_KEY: ReadonlyMap<CheckKey, CheckDefinition> = new Map(CHECKS.map((c) => [c.key, c]));

/** A check as a plan states it. */
export interface PlannedCheck {
  key: CheckKey;
  enabled: boolean;
  threshold: number;
  remedy: string;
}

export function defaultChecks(hasTreatment: boolean): PlannedCheck[] {
  return CHECKS.filter((c) => hasTreatment || !c.needsTreatment).map((c) => ({
    key: c.key,
    enabled: true,
    threshold: c.defaultThreshold,
    remedy: c.defaultRemedy,
  }));
}

/** One flagged subject: rank 1 is the most extreme. */
export interface FlaggedObservation {
  rank: number;
  row: number;
  id: string | null;
  value: number;
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
  figure: FigureKey;
  flagged?: FlaggedObservation[];
  value?: number | null;
}

const fmt = (x: number, digits = 3): string => {
  if (!Number.isFinite(x)) return "—";
  const a = Math.abs(x);
  if (a !== 0 && (a < 0.001 || a >= 1e5)) return x.toExponential(2);
  return x.toFixed(digits);
};

/** A plan's threshold number as written: 4, 2, 0.05, 2.236. */
const kText = (k: number): string => String(Number(k.toPrecision(4)));

export const formatP = (p: number | null | undefined): string =>
  p === null || p === undefined || !Number.isFinite(p) ? "—" : p < 0.0001 ? "< 0.0001" : p.toFixed(4);

function flagged(values: number[], rows: number[], ids: (string | null)[], bound: number, useAbs: boolean): FlaggedObservation[] {
  const out: { row: number; id: string | null; value: number }[] = [];
  values.forEach((v, i) => {
    const m = useAbs ? Math.abs(v) : v;
    if (Number.isFinite(m) && m > bound) out.push({ row: rows[i], id: ids[i], value: v });
  });
  out.sort((a, b) => (useAbs ? Math.abs(b.value) - Math.abs(a.value) : b.value - a.value) || a.row - b.row);
  return out.map((o, i) => ({ rank: i + 1, ...o }));
}

function subject(o: { id: string | null; row: number }): string {
  return o.id ? `subject ${o.id}` : `row ${o.row}`;
}

function observationCheck(
  def: CheckDefinition,
  planned: PlannedCheck,
  values: number[],
  bound: number,
  thresholdText: string,
  useAbs: boolean,
  r: LinearModelResult,
  what: string,
): CheckOutcome {
  const obs = r.observations;
  const list = flagged(values, obs.row, obs.id, bound, useAbs);
  let maxIndex = -1;
  values.forEach((v, i) => {
    const m = useAbs ? Math.abs(v) : v;
    if (Number.isFinite(m) && (maxIndex < 0 || m > (useAbs ? Math.abs(values[maxIndex]) : values[maxIndex]))) maxIndex = i;
  });
  const max = maxIndex >= 0 ? values[maxIndex] : NaN;
  const who = maxIndex >= 0 ? subject({ id: obs.id[maxIndex], row: obs.row[maxIndex] }) : "";
  return {
    key: def.key,
    label: def.label,
    outcome: list.length > 0 ? "finding" : "within",
    statistic: `largest ${what} ${fmt(max)}${who ? ` (${who})` : ""}`,
    threshold: thresholdText,
    summary:
      list.length > 0
        ? `${list.length} of ${r.n} subjects exceed the threshold; the most extreme is ${subject(list[0])}.`
        : `No subject exceeds the threshold.`,
    remedy: planned.remedy,
    figure: def.figure,
    flagged: list,
    value: max,
  };
}

function pCheck(def: CheckDefinition, planned: PlannedCheck, test: { p: number | null; statistic: number | null; reason?: string } | undefined, statName: string): CheckOutcome {
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
  return {
    key: def.key,
    label: def.label,
    outcome: finding ? "finding" : "within",
    statistic: `${statName} = ${fmt(test.statistic)}, p ${test.p < 0.0001 ? "< 0.0001" : `= ${test.p.toFixed(4)}`}`,
    threshold: `p < ${planned.threshold}`,
    summary: finding ? `The test rejects at the planned level.` : `The test does not reject at the planned level.`,
    remedy: planned.remedy,
    figure: def.figure,
    value: test.p,
  };
}

/** The coefficient indices of the treatment term (its non-reference levels). */
function treatmentCoefficients(r: LinearModelResult): number[] {
  const t = r.spec.treatment;
  if (!t) return [];
  return r.coefficients.flatMap((c, i) => (c.term === t ? [i] : []));
}

/** Evaluates every enabled check of the plan on a linear-model result. */
export function evaluateChecks(r: LinearModelResult, planned: readonly PlannedCheck[]): CheckOutcome[] {
  const n = r.n;
  const p = r.rank;
  const obs = r.observations;
  const out: CheckOutcome[] = [];
  for (const pc of planned) {
    if (!pc.enabled) continue;
    const def = CHECK_BY_KEY.get(pc.key);
    if (!def) continue;
    const k = pc.threshold;
    switch (pc.key) {
      case "cooks_distance":
        out.push(observationCheck(def, pc, obs.cooksDistance, k / n, `${kText(k)}/n = ${fmt(k / n, 4)}`, false, r, "Cook's distance"));
        break;
      case "leverage":
        out.push(observationCheck(def, pc, obs.leverage, (k * p) / n, `${kText(k)}·p/n = ${fmt((k * p) / n, 4)}`, false, r, "leverage"));
        break;
      case "deletion_residual":
        out.push(observationCheck(def, pc, obs.studentizedExternal, k, `|t| > ${kText(k)}`, true, r, "|deletion residual|"));
        break;
      case "dffits":
        out.push(observationCheck(def, pc, obs.dffits, k * Math.sqrt(p / n), `${kText(k)}·√(p/n) = ${fmt(k * Math.sqrt(p / n), 4)}`, true, r, "|DFFITS|"));
        break;
      case "dfbetas_treatment": {
        const idx = treatmentCoefficients(r);
        if (idx.length === 0) {
          out.push({ ...pCheck(def, pc, undefined, ""), threshold: `${kText(k)}/√n`, summary: "Not computed: the model names no treatment." });
          break;
        }
        // Per subject, the largest |DFBETAS| over the treatment coefficients.
        const worst = obs.row.map((_, i) => {
          let m = 0;
          for (const j of idx) if (Math.abs(obs.dfbetas[j][i]) > Math.abs(m)) m = obs.dfbetas[j][i];
          return m;
        });
        out.push(observationCheck(def, pc, worst, k / Math.sqrt(n), `${kText(k)}/√n = ${fmt(k / Math.sqrt(n), 4)}`, true, r, "|DFBETAS| on treatment"));
        break;
      }
      case "shapiro_wilk":
        out.push(pCheck(def, pc, r.tests.shapiroWilk, "W"));
        break;
      case "breusch_pagan":
        out.push(pCheck(def, pc, r.tests.breuschPagan, "BP"));
        break;
      case "brown_forsythe":
        out.push(pCheck(def, pc, r.tests.brownForsythe, "F"));
        break;
      case "homogeneity_of_slopes":
        out.push(pCheck(def, pc, r.tests.homogeneityOfSlopes, "F"));
        break;
      case "reset":
        out.push(pCheck(def, pc, r.tests.reset, "F"));
        break;
      case "gvif": {
        const rows = r.vif;
        if (rows.length === 0) {
          out.push({ ...pCheck(def, pc, undefined, ""), threshold: `> ${fmt(k)}`, summary: "Not computed: fewer than two terms." });
          break;
        }
        const worst = rows.reduce((a, b) => (b.adjusted > a.adjusted ? b : a));
        const over = rows.filter((v) => v.adjusted > k);
        out.push({
          key: def.key,
          label: def.label,
          outcome: over.length > 0 ? "finding" : "within",
          statistic: `largest GVIF^(1/(2·df)) ${fmt(worst.adjusted)} (${worst.term})`,
          threshold: `> ${fmt(k)}`,
          summary: over.length > 0 ? `${over.map((v) => v.term).join(", ")} exceed the threshold.` : "No term exceeds the threshold.",
          remedy: pc.remedy,
          figure: def.figure,
          value: worst.adjusted,
        });
        break;
      }
    }
  }
  return out;
}
