/**
 * The Cox proportional hazards rerun: partial likelihood (Efron or Breslow ties, strata, offset,
 * case weights) maximized by Newton–Raphson; Wald, likelihood-ratio and score tests; robust
 * (sandwich, optionally clustered) variance from the weighted DFBETA residuals (Lin and Wei
 * 1989); residuals and influence; the proportional-hazards test; concordance; Kaplan–Meier
 * curves and the log-rank test by treatment arm, stratified as the model is.
 */
import { toDataTable, type TableInput } from "../data";
import { normalQuantile, normalUpper, chiSquareUpper } from "../distributions";
import { EngineError } from "../errors";
import { ENGINE_VERSION, RESULTS_CAUTION } from "../version";
import { concordance } from "./concordance";
import { prepareCoxData, type CoxData } from "./cox-data";
import { coxResiduals } from "./cox-residuals";
import { parseCoxSpec, type CoxSpec } from "./cox-spec";
import { kaplanMeier, type SurvivalCurve } from "./kaplan-meier";
import { logRank, type LogRankTest } from "./log-rank";
import { detectMonotoneLikelihood } from "./monotone-likelihood";
import { newtonRaphson } from "./newton-raphson";
import { linearPredictor, sweep } from "./partial-likelihood";
import {
  proportionalHazardsTest,
  type ChiSquareTest,
  type ProportionalHazardsTest,
} from "./proportional-hazards";
import { cholesky, choleskyInverse, inverseQuadraticForm } from "./symmetric";

/** Raised when the partial likelihood rises without bound: the planned model has no finite estimate. */
export class MonotoneLikelihoodError extends EngineError {
  constructor(
    message: string,
    readonly coefficients: readonly string[],
    readonly terms: readonly string[],
  ) {
    super(message);
    this.name = "MonotoneLikelihoodError";
  }
}

export interface CoxCoefficientRow {
  readonly name: string;
  readonly term: string;
  /** Log hazard ratio. */
  readonly estimate: number;
  /** Model-based standard error (inverse information). */
  readonly se: number;
  /** Sandwich standard error (clustered when the plan names a cluster, else per row). */
  readonly robustSe: number;
  /** Wald z, p and 95% interval; on the robust standard error when `robust`. */
  readonly statistic: number;
  readonly p: number;
  readonly lower: number;
  readonly upper: number;
}

export interface HazardRatioRow {
  readonly name: string;
  readonly ratio: number;
  readonly lower: number;
  readonly upper: number;
}

export interface CoxObservationColumns {
  readonly row: number[];
  readonly id: (string | null)[];
  readonly time: number[];
  readonly status: number[];
  readonly linearPredictor: number[];
  readonly martingale: number[];
  readonly deviance: number[];
  /** One array per coefficient. */
  readonly score: number[][];
  /** Score residuals times the model variance (times the case weight when weighted). */
  readonly dfbeta: number[][];
  /** DFBETA over the model standard error of each coefficient. */
  readonly dfbetas: number[][];
}

export interface SchoenfeldRow {
  readonly row: number;
  readonly time: number;
  readonly stratum: string;
  readonly residual: number[];
  /** Scaled: residual × variance × events + estimate (Grambsch and Therneau 1994). */
  readonly scaled: number[];
}

export interface SurvivalByGroup extends SurvivalCurve {
  /** Treatment level, or null for all rows when the plan names no treatment. */
  readonly level: string | null;
  /** Stratum label, or null for the curve over all strata. */
  readonly stratum: string | null;
}

export interface CoxResult {
  readonly kind: "cox";
  readonly engineVersion: string;
  readonly caution: string;
  readonly spec: CoxSpec;
  readonly ties: CoxSpec["ties"];
  readonly n: number;
  readonly excluded: number;
  readonly excludedRows: number[];
  readonly strata: readonly string[];
  readonly terms: { readonly label: string; readonly kind: string; readonly coefficients: string[] }[];
  readonly coefficients: CoxCoefficientRow[];
  readonly ratios: HazardRatioRow[];
  /** Model-based covariance (row arrays). */
  readonly covariance: number[][];
  readonly robustCovariance: number[][];
  /** True when the plan names a cluster or the case weights are not whole numbers (as R's coxph): Wald inference then uses the robust covariance. */
  readonly robust: boolean;
  readonly fit: {
    readonly logLik: number;
    readonly logLikNull: number;
    readonly events: number;
    readonly eventsPerCoefficient: number;
    readonly concordance: number;
    readonly iterations: number;
    readonly converged: boolean;
  };
  readonly tests: {
    readonly likelihoodRatio: ChiSquareTest;
    /** On the robust covariance when `robust` (as R's coxph). */
    readonly wald: ChiSquareTest;
    readonly score: ChiSquareTest;
    /** Robust score test, when `robust`. */
    readonly robustScore: ChiSquareTest | null;
    readonly logRank: LogRankTest | null;
    readonly proportionalHazards: ProportionalHazardsTest;
  };
  readonly observations: CoxObservationColumns;
  readonly schoenfeld: SchoenfeldRow[];
  readonly survival: SurvivalByGroup[];
  readonly notes: string[];
}

function chiSquare(statistic: number, df: number): ChiSquareTest {
  return { statistic, df, p: chiSquareUpper(statistic, df) };
}

/** Rows of a row-major p×p matrix. */
function rowsOf(m: Float64Array, p: number): number[][] {
  return Array.from({ length: p }, (_, i) => Array.from(m.subarray(i * p, (i + 1) * p)));
}

/** Sums per cluster of the row values (columns of length n); clusters in first-seen order. */
function collapse(columns: readonly Float64Array[], cluster: readonly string[] | null): Float64Array[] {
  if (!cluster) return columns.map((c) => c);
  const index = new Map<string, number>();
  for (const c of cluster) if (!index.has(c)) index.set(c, index.size);
  return columns.map((col) => {
    const out = new Float64Array(index.size);
    col.forEach((v, i) => (out[index.get(cluster[i]) as number] += v));
    return out;
  });
}

function crossProduct(columns: readonly Float64Array[]): Float64Array {
  const p = columns.length;
  const out = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    for (let l = 0; l <= j; l++) {
      let s = 0;
      for (let i = 0; i < columns[j].length; i++) s += columns[j][i] * columns[l][i];
      out[j * p + l] = s;
      out[l * p + j] = s;
    }
  }
  return out;
}

/** Score residuals times a p×p matrix, each multiplied by the row weight when `weighted`. */
function timesMatrix(
  score: readonly Float64Array[],
  m: Float64Array,
  data: CoxData,
  weighted: boolean,
): Float64Array[] {
  const { n, p } = data;
  return Array.from({ length: p }, (_, j) => {
    const out = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let l = 0; l < p; l++) s += score[l][i] * m[l * p + j];
      out[i] = weighted ? s * data.weight[i] : s;
    }
    return out;
  });
}

/** Fits the Cox model of a time-to-event specification. */
export function fitCoxModel(specInput: CoxSpec | unknown, tableInput: TableInput): CoxResult {
  const spec = parseCoxSpec(specInput);
  const table = toDataTable(tableInput);
  if (table.nRows === 0) throw new EngineError("the data has no rows");
  const { data, prepared, design, excludedRows } = prepareCoxData(spec, table);
  const { n, p } = data;
  if (p === 0)
    throw new EngineError(
      "the time-to-event model has no terms; list at least one covariate or the treatment",
    );
  const events = data.status.reduce((s, v) => s + v, 0);
  const termOf = new Map<number, string>();
  for (const t of design.terms) for (const c of t.columns) termOf.set(c, t.label);

  // aliased columns make the information singular at every β
  const start = cholesky(
    sweep(data, linearPredictor(data, new Float64Array(p)), spec.ties, false).info,
    p,
    1e-10,
  );
  if (!("l" in start)) {
    throw new EngineError(
      `the design's columns are aliased: "${design.names[start.failedColumn]}" cannot be estimated apart from earlier columns (or never varies within a risk set); a planned model must be estimable as written`,
    );
  }

  const nr = newtonRaphson(data, spec.ties);
  let scaleMax = 0;
  for (let j = 0; j < p; j++) {
    let ss = 0;
    for (let i = 0; i < n; i++) ss += data.x[j * n + i] ** 2;
    scaleMax = Math.max(scaleMax, Math.abs(nr.beta[j]) * Math.sqrt(ss / n));
  }
  if (!nr.converged || nr.singularColumn !== null || scaleMax > 10) {
    const found = detectMonotoneLikelihood(data, spec.ties, nr.beta, nr.lastStep);
    if (found) {
      const names = found.coefficients.map((j) => design.names[j]);
      const termLabels = [...new Set(found.coefficients.map((j) => termOf.get(j) as string))];
      const described = found.coefficients
        .map((j, k) => `"${design.names[j]}" towards ${found.signs[k] > 0 ? "+" : "−"}∞`)
        .join(", ");
      throw new MonotoneLikelihoodError(
        `monotone likelihood: the partial likelihood keeps rising as ${described} (every event ranks highest in its risk set along that direction, for example a group with no events), so the planned model has no finite maximum-likelihood estimate; consider a penalized (Firth) fit or merging levels as a documented deviation`,
        names,
        termLabels,
      );
    }
    if (nr.singularColumn !== null) {
      throw new EngineError(
        `the information matrix became singular at "${design.names[nr.singularColumn]}" during the fit; the model cannot be estimated as written`,
      );
    }
  }

  const beta = nr.beta;
  const fitSweep = nr.final;
  const factor = cholesky(fitSweep.info, p, 0);
  if (!("l" in factor))
    throw new EngineError(
      `the information matrix is singular at the estimate ("${design.names[factor.failedColumn]}")`,
    );
  const variance = choleskyInverse(factor.l, p);

  const res = coxResiduals(data, fitSweep);
  const dfbeta = timesMatrix(res.score, variance, data, data.weighted);
  const seModel = Array.from({ length: p }, (_, j) => Math.sqrt(variance[j * p + j]));
  const dfbetas = dfbeta.map((col, j) => col.map((v) => v / seModel[j]));
  // sandwich: D'D with D the weighted DFBETA rows, summed within clusters
  const robustVar = crossProduct(collapse(timesMatrix(res.score, variance, data, true), data.cluster));
  // as R's coxph: the sandwich carries the inference when a cluster is named or the case weights
  // are not whole numbers (sampling weights, for which the model-based variance is wrong)
  const robust = data.cluster !== null || (data.weighted && data.weight.some((w) => w !== Math.floor(w)));

  const q = normalQuantile(0.975);
  const coefficients: CoxCoefficientRow[] = design.names.map((name, j) => {
    const estimate = beta[j];
    const robustSe = Math.sqrt(robustVar[j * p + j]);
    const se = seModel[j];
    const used = robust ? robustSe : se;
    const statistic = estimate / used;
    return {
      name,
      term: termOf.get(j) as string,
      estimate,
      se,
      robustSe,
      statistic,
      p: 2 * normalUpper(Math.abs(statistic)),
      lower: estimate - q * used,
      upper: estimate + q * used,
    };
  });
  const ratios = coefficients.map((c) => ({
    name: c.name,
    ratio: Math.exp(c.estimate),
    lower: Math.exp(c.lower),
    upper: Math.exp(c.upper),
  }));

  const logLikNull = nr.initial.logLik;
  const likelihoodRatio = chiSquare(2 * (nr.logLik - logLikNull), p);
  const waldStatistic = robust ? inverseQuadraticForm(robustVar, p, beta) : quadratic(fitSweep.info, p, beta);
  const scoreStatistic = inverseQuadraticForm(nr.initial.info, p, nr.initial.score);
  let robustScore: ChiSquareTest | null = null;
  if (robust) {
    // robust score test: the (clustered) weighted score residuals at β = 0, the offset kept in
    // the linear predictor (R's coxph evaluates them at 0 and so drops an offset there)
    const nullSweep = sweep(data, linearPredictor(data, new Float64Array(p)), spec.ties, true);
    const nullScore = collapse(
      coxResiduals(data, nullSweep).score.map((col) => col.map((v, i) => v * data.weight[i])),
      data.cluster,
    );
    const u = nullScore.map((col) => col.reduce((s, v) => s + v, 0));
    robustScore = chiSquare(inverseQuadraticForm(crossProduct(nullScore), p, u), p);
  }

  if (spec.proportionalHazards.transform === "log") {
    const k = data.status.findIndex((d, i) => d === 1 && !(data.time[i] > 0));
    if (k >= 0) {
      throw new EngineError(
        `the log time transform of the proportional-hazards test needs positive event times: data row ${prepared.rowNumbers[prepared.used[k]]} has an event at time ${data.time[k]}; plan the "km", "rank" or "identity" transform instead`,
      );
    }
  }
  const ph = proportionalHazardsTest(data, fitSweep, design.terms, spec.proportionalHazards.transform);
  const eta = linearPredictor(data, beta);
  const conc = concordance(eta, data.time, data.status, data.stratum, data.weight);

  // treatment arms: Kaplan–Meier per arm (and per arm within stratum), log-rank stratified as the model
  const survival: SurvivalByGroup[] = [];
  let logRankTest: LogRankTest | null = null;
  const treatment = spec.treatment ? prepared.variables.get(spec.treatment) : undefined;
  const armOf = treatment && treatment.kind === "categorical" ? treatment.codes : new Int32Array(n);
  const armLevels = treatment && treatment.kind === "categorical" ? treatment.levels : [null];
  const all = Array.from({ length: n }, (_, i) => i);
  armLevels.forEach((level, a) => {
    survival.push({
      level,
      stratum: null,
      ...kaplanMeier(
        all.filter((i) => armOf[i] === a),
        data.time,
        data.status,
      ),
    });
  });
  if (spec.strata.length > 0) {
    data.strataLabels.forEach((label, s) => {
      armLevels.forEach((level, a) => {
        const rows = all.filter((i) => armOf[i] === a && data.stratum[i] === s);
        if (rows.length > 0)
          survival.push({ level, stratum: label, ...kaplanMeier(rows, data.time, data.status) });
      });
    });
  }
  if (armLevels.length > 1)
    logRankTest = logRank(armOf, armLevels.length, data.stratum, data.time, data.status);

  const eventsPerCoefficient = events / p;
  const notes: string[] = [];
  if (!nr.converged)
    notes.push(
      `Newton–Raphson stopped after ${nr.iterations} iterations without meeting the convergence rule; read the estimates with care.`,
    );
  if (eventsPerCoefficient < 10) {
    notes.push(
      `Only ${eventsPerCoefficient.toFixed(1)} events per estimated coefficient (fewer than 10): estimates may be biased away from zero and intervals too narrow.`,
    );
  }

  const scaledFactor = res.eventRows.length;
  const schoenfeld: SchoenfeldRow[] = res.eventRows.map((i, k) => {
    const residual = res.schoenfeld.map((col) => col[k]);
    const scaled = Array.from({ length: p }, (_, j) => {
      let s = 0;
      for (let l = 0; l < p; l++) s += residual[l] * variance[l * p + j];
      return s * scaledFactor + beta[j];
    });
    return {
      row: prepared.rowNumbers[prepared.used[i]],
      time: data.time[i],
      stratum: data.strataLabels[data.stratum[i]],
      residual,
      scaled,
    };
  });

  return {
    kind: "cox",
    engineVersion: ENGINE_VERSION,
    caution: RESULTS_CAUTION,
    spec,
    ties: spec.ties,
    n,
    excluded: excludedRows.length,
    excludedRows,
    strata: spec.strata.length > 0 ? data.strataLabels : [],
    terms: design.terms.map((t) => ({
      label: t.label,
      kind: t.kind,
      coefficients: t.columns.map((c) => design.names[c]),
    })),
    coefficients,
    ratios,
    covariance: rowsOf(variance, p),
    robustCovariance: rowsOf(robustVar, p),
    robust,
    fit: {
      logLik: nr.logLik,
      logLikNull,
      events,
      eventsPerCoefficient,
      concordance: conc,
      iterations: nr.iterations,
      converged: nr.converged,
    },
    tests: {
      likelihoodRatio,
      wald: chiSquare(waldStatistic, p),
      score: chiSquare(scoreStatistic, p),
      robustScore,
      logRank: logRankTest,
      proportionalHazards: ph,
    },
    observations: {
      row: Array.from(prepared.used, (i) => prepared.rowNumbers[i]),
      id: [...prepared.ids],
      time: Array.from(data.time),
      status: Array.from(data.status),
      linearPredictor: Array.from(eta),
      martingale: Array.from(res.martingale),
      deviance: Array.from(res.deviance),
      score: res.score.map((c) => Array.from(c)),
      dfbeta: dfbeta.map((c) => Array.from(c)),
      dfbetas: dfbetas.map((c) => Array.from(c)),
    },
    schoenfeld,
    survival,
    notes,
  };
}

function quadratic(m: Float64Array, p: number, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) s += b[i] * m[i * p + j] * b[j];
  return s;
}
