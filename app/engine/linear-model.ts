/**
 * The linear model rerun: complete-case data, design, (weighted) least squares, inference,
 * observation-level diagnostics, tests of assumptions, variance inflation and adjusted means.
 */
import {
  adjustedMeans,
  type AdjustedMean,
  type AdjustedMeansGrid,
  type Contrast,
  type MeansWeighting,
} from "./adjusted-means";
import {
  buildDesign,
  designColumn,
  prepareData,
  type Design,
  type PreparedData,
  type Variable,
} from "./design";
import {
  observationDiagnostics,
  partialResidualsOfColumns,
  type ObservationDiagnostics,
  type RobustCovarianceParts,
  type RobustType,
} from "./diagnostics";
import { fUpper, tQuantile, tTwoSided } from "./distributions";
import { EngineError } from "./errors";
import { leastSquares, type DesignColumnSource } from "./least-squares";
import type { LinearFitContext } from "./linear-fit-context";
import type { ContrastSet, ModelSpec } from "./model-spec";
import type { Multiplicity } from "./multiplicity";
import { normalityTests, type AndersonDarlingTest, type NormalityTest } from "./normality";
import { readQqShape, type QqShape } from "./qq-shape";
import { homogeneityOfSlopes, resetTest, type HomogeneityOfSlopes } from "./specification-tests";
import {
  breuschPagan,
  breuschPaganOnBasis,
  brownForsythe,
  type BreuschPaganTest,
  type FTest,
} from "./spread";
import { ENGINE_VERSION, RESULTS_CAUTION } from "./version";
import { predictorVarianceInflation, varianceInflation, type PredictorVifRow, type VifRow } from "./vif";
import { toNumbers, type DataTable } from "./data";
import { treatmentTestProblem, waldF, type TreatmentFTest } from "./treatment-test";

export type CovarianceType = "model" | "HC0" | "HC1" | "HC2" | "HC3";

/** What produced a result: the planned fit or one of the remedies. */
export interface FitMethod {
  readonly kind: "planned" | "weighted" | "estimated-variance" | "robust";
  /** A short description in plain words. */
  readonly description: string;
}

export interface FitOptions {
  /** How adjusted means average over other categorical factors (default: the specification's `means`, else equal). */
  readonly meansWeighting?: MeansWeighting;
  /** Standard errors of the coefficient table: model-based (default) or a robust type. */
  readonly covariance?: CovarianceType;
  /** Weights over the rows used, replacing the prior weights (remedies). */
  readonly weightsOverride?: Float64Array;
  readonly method?: FitMethod;
}

export interface CoefficientRow {
  readonly name: string;
  /** Label of the term the coefficient belongs to (null for the intercept). */
  readonly term: string | null;
  readonly estimate: number;
  readonly se: number;
  readonly statistic: number;
  readonly p: number;
  readonly lower: number;
  readonly upper: number;
}

export interface FitSummary {
  readonly sigma: number;
  readonly rSquared: number;
  readonly adjRSquared: number;
  readonly fStatistic: number | null;
  readonly fDf1: number;
  readonly fDf2: number;
  readonly fP: number | null;
  /** Σ w e². */
  readonly rss: number;
  readonly logLikelihood: number;
  readonly aic: number;
}

/** Observation-level values, one array entry per used row (NaN where undefined, e.g. leverage one). */
export interface ObservationColumns {
  /** 1-based data row in the source (header excluded). */
  readonly row: number[];
  readonly id: (string | null)[];
  readonly response: number[];
  /** Weights used in the fit (null when unweighted). */
  readonly weight: number[] | null;
  readonly fitted: number[];
  /** e = y − ŷ. */
  readonly residual: number[];
  /** √w·e (equal to the residual when unweighted). */
  readonly scaledResidual: number[];
  readonly leverage: number[];
  readonly studentizedInternal: number[];
  readonly studentizedExternal: number[];
  readonly cooksDistance: number[];
  readonly dffits: number[];
  /** DFBETAS, one array per coefficient (coefficient order). */
  readonly dfbetas: number[][];
  /** Component-plus-residual values per term. */
  readonly partialResiduals: { readonly term: string; readonly values: number[] }[];
}

export interface VariableSummary {
  readonly name: string;
  readonly kind: "continuous" | "categorical";
  readonly mean?: number;
  readonly levels?: readonly string[];
  readonly reference?: string;
  readonly counts?: readonly number[];
}

export interface AssumptionTests {
  readonly shapiroWilk: NormalityTest;
  readonly andersonDarling: AndersonDarlingTest;
  readonly lilliefors: NormalityTest;
  readonly breuschPagan: BreuschPaganTest;
  readonly reset: FTest;
  readonly homogeneityOfSlopes?: HomogeneityOfSlopes;
  readonly brownForsythe?: FTest;
  /** Overall F test of the treatment term (treatment-test.ts). */
  readonly treatment?: TreatmentFTest;
}

/** The full result of a linear-model rerun (the headless command prints a projection of it). */
export interface LinearModelResult {
  readonly kind: "linear";
  readonly engineVersion: string;
  readonly caution: string;
  readonly method: FitMethod;
  readonly spec: ModelSpec;
  readonly family: "gaussian";
  readonly link: "identity";
  readonly n: number;
  readonly excluded: number;
  readonly excludedRows: number[];
  readonly rank: number;
  readonly dfResidual: number;
  readonly variables: VariableSummary[];
  readonly terms: { readonly label: string; readonly kind: string; readonly coefficients: string[] }[];
  readonly coefficients: CoefficientRow[];
  /** Covariance of the coefficient table's estimates (model-based unless a robust type was asked). */
  readonly covariance: number[][];
  readonly covarianceType: CovarianceType;
  readonly modelSE: number[];
  readonly robustSE: {
    readonly HC0: number[];
    readonly HC1: number[];
    readonly HC2: number[];
    readonly HC3: number[];
  };
  readonly fit: FitSummary;
  readonly observations: ObservationColumns;
  readonly tests: AssumptionTests;
  readonly vif: VifRow[];
  /** Predictor-wise GVIF (each variable with its interactions; read by the collinearity check). */
  readonly vifByPredictor: PredictorVifRow[];
  readonly qqShape: QqShape;
  readonly adjustedMeans: AdjustedMean[] | null;
  readonly contrasts: Contrast[] | null;
  readonly adjustedMeansWeighting: MeansWeighting | null;
  /** Covariate values and cell weights the adjusted means average over. */
  readonly adjustedMeansGrid?: AdjustedMeansGrid | null;
  /** The plan's contrast set and multiplicity method (absent in results stored before they were planned). */
  readonly contrastSet?: ContrastSet | null;
  readonly multiplicity?: Multiplicity | null;
}

function toMatrix(m: Float64Array, p: number): number[][] {
  return Array.from({ length: p }, (_, i) => Array.from({ length: p }, (_, j) => m[j * p + i]));
}

function diagonalRoots(m: Float64Array, p: number): number[] {
  return Array.from({ length: p }, (_, j) => Math.sqrt(m[j * p + j]));
}

function roots(diagonal: Float64Array): number[] {
  return Array.from(diagonal, (v) => Math.sqrt(v));
}

function summarizeVariable(v: Variable): VariableSummary {
  return v.kind === "continuous"
    ? { name: v.name, kind: v.kind, mean: v.mean }
    : { name: v.name, kind: v.kind, levels: v.levels, reference: v.reference, counts: v.counts };
}

/** The 1-based data row of each used row (a counted loop, not Array.from over the typed index). */
function usedRowNumbers(data: PreparedData): number[] {
  const out = new Array<number>(data.used.length);
  for (let k = 0; k < out.length; k++) out[k] = data.rowNumbers[data.used[k]];
  return out;
}

/** Checks run before the fit: enough rows, a response that varies. */
function checkEstimable(spec: ModelSpec, data: PreparedData, design: Design): void {
  const n = design.n;
  if (n <= design.p) {
    throw new EngineError(
      `${n} usable rows for ${design.p} coefficients: the model needs more usable rows than coefficients (${data.excludedRows.length} rows left out for missing cells)`,
    );
  }
  const y = data.response;
  let constant = true;
  for (let i = 1; i < n; i++) if (y[i] !== y[0]) constant = false;
  if (constant)
    throw new EngineError(
      `response "${spec.response}" is constant (every used row is ${y[0]}); there is nothing to model`,
    );
}

/** Fits the linear model the specification describes (gaussian family, identity link). */
export function fitLinearModel(
  spec: ModelSpec,
  table: DataTable,
  options: FitOptions = {},
): LinearModelResult {
  if (spec.family !== "gaussian") throw new EngineError(`family "${spec.family}" is not a linear model`);
  if (spec.link !== undefined && spec.link !== "identity") {
    throw new EngineError(`link "${spec.link}" is not available for the gaussian family; use "identity"`);
  }
  return assembleResult(fitWithQ(spec, table, options), options);
}

/** What the steps that read Q hand on: the fit without Q, its diagnostics and the tests made from Q. */
interface FittedWithoutQ {
  readonly ctx: LinearFitContext;
  readonly diag: ObservationDiagnostics;
  readonly robust: RobustCovarianceParts;
  readonly breuschPagan: BreuschPaganTest;
  readonly reset: FTest;
  readonly homogeneityOfSlopes: HomogeneityOfSlopes | null;
}

/** Stands in for the n×p storage once it is no longer read. */
const RELEASED = new Float64Array(0);

/** The least-squares fit in the design's own storage (it holds Q afterwards), with what it was made from. */
function leastSquaresFit(spec: ModelSpec, table: DataTable, options: FitOptions) {
  const data = prepareData(spec, table, { shareColumns: true });
  const design = buildDesign(spec, data);
  checkEstimable(spec, data, design);
  const weights = options.weightsOverride ?? data.weights;
  const column = designColumnSource(design, data);
  const outcome = leastSquares(
    { x: design.x, n: design.n, p: design.p, y: data.response, weights, offset: data.offset },
    undefined,
    { overwriteDesign: true, designColumns: column },
  );
  if (!outcome.ok) {
    const names = outcome.aliased.map((j) => `"${design.names[j]}"`).join(", ");
    throw new EngineError(
      `the design's columns are aliased: ${names} cannot be estimated apart from earlier columns; a planned model must be estimable as written`,
    );
  }
  return { data, design, fit: outcome.fit, weights, column };
}

/** What a remedy reads of the planned fit: the rows used, fitted values, √w·e and the weights. */
export interface PlannedResiduals {
  readonly n: number;
  /** 1-based data row of each used row. */
  readonly row: readonly number[];
  readonly fitted: Float64Array;
  readonly scaledResidual: Float64Array;
  readonly weight: Float64Array | null;
}

/**
 * The planned fit's residuals alone (the same bits as the full result's), for a remedy that
 * refits from them: no diagnostics, tests or means are made.
 */
export function plannedResiduals(
  spec: ModelSpec,
  table: DataTable,
  options: FitOptions = {},
): PlannedResiduals {
  const { data, fit, weights } = leastSquaresFit(spec, table, options);
  return {
    n: fit.n,
    row: usedRowNumbers(data),
    fitted: fit.fitted,
    scaledResidual: fit.weightedResiduals,
    weight: weights,
  };
}

/**
 * The fit and every step that reads its Q. The design's own storage is factored and becomes Q
 * (the design's columns are written again from the variables wherever they are read later), and
 * Q is let go when this returns, before the per-term columns of the result are made: at
 * 1 000 000 × 50 each n×p array is 400 MB.
 */
function fitWithQ(spec: ModelSpec, table: DataTable, options: FitOptions): FittedWithoutQ {
  const { data, design, fit, weights, column } = leastSquaresFit(spec, table, options);
  const ctx: LinearFitContext = { spec, data, design, fit, weights };
  // full robust matrices only where read: the coefficient table's type, and HC3 for the adjusted means
  const covarianceType = options.covariance ?? "model";
  const full: RobustType[] = [
    ...(covarianceType === "model" ? [] : [covarianceType]),
    ...(spec.treatment && covarianceType !== "HC3" ? (["HC3"] as const) : []),
  ];
  const diag = observationDiagnostics(fit, { robust: { full } });
  const { n, p } = design;
  const scaled = fit.weightedResiduals;
  // unweighted, the fit's Q spans the regressors: no second factorization; weighted, the
  // regressors are the unweighted design, written again
  const bp = weights
    ? breuschPagan(scaled, designColumns(column, n, p), n, p)
    : breuschPaganOnBasis(scaled, fit.q, n, p);
  const reset = resetTest(ctx);
  const slopes = homogeneityOfSlopes(ctx);
  // nothing reads Q (the design's storage) from here on: its memory is given back now, not at
  // the next full collection, before the result's per-term columns are made
  releaseNow(design.x);
  return {
    ctx: { ...ctx, design: { ...design, x: RELEASED }, fit: { ...fit, q: RELEASED } },
    diag,
    robust: diag.robust as RobustCovarianceParts,
    breuschPagan: bp,
    reset,
    homogeneityOfSlopes: slopes,
  };
}

/**
 * Hands an array's buffer to a clone that nothing keeps: the array reads as empty from then on,
 * and its memory goes with the clone at the next minor collection instead of waiting for a full
 * one (the buffer, made early in the fit, is old by then). At 1 000 000 × 50 this is 400 MB.
 */
function releaseNow(x: Float64Array): void {
  if (x.byteLength > 0 && typeof structuredClone === "function")
    structuredClone(x.buffer, { transfer: [x.buffer] });
}

/** Design column j from the variables (its factors' product), as buildDesign wrote it. */
function designColumnSource(design: Design, data: PreparedData): DesignColumnSource {
  return (j, scratch) => designColumn(design.columnFactors[j], data.variables, scratch);
}

/** The whole design (column-major n×p) written again from the variables. */
function designColumns(column: DesignColumnSource, n: number, p: number): Float64Array {
  const x = new Float64Array(n * p);
  for (let j = 0; j < p; j++) {
    const target = x.subarray(j * n, (j + 1) * n);
    const values = column(j, target);
    if (values !== target) target.set(values);
  }
  return x;
}

/**
 * Σ w (η − η̄)² of the linear predictor η = ŷ − offset, centred on its weighted mean when the
 * model has an intercept (a small function of its own, so that it is compiled once and kept).
 */
function modelSumOfSquares(
  n: number,
  fitted: Float64Array,
  offset: Float64Array | null,
  w: Float64Array | null,
  intercept: boolean,
): number {
  let sw = 0;
  let swf = 0;
  const eta = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    eta[i] = fitted[i] - (offset ? offset[i] : 0);
    const wi = w ? w[i] : 1;
    sw += wi;
    swf += wi * eta[i];
  }
  const center = intercept ? swf / sw : 0;
  let mss = 0;
  for (let i = 0; i < n; i++) mss += (w ? w[i] : 1) * (eta[i] - center) ** 2;
  return mss;
}

/** Σ log wᵢ. */
function sumOfLogs(n: number, w: Float64Array): number {
  let s = 0;
  for (let i = 0; i < n; i++) s += Math.log(w[i]);
  return s;
}

function assembleResult(fitted: FittedWithoutQ, options: FitOptions): LinearModelResult {
  const { ctx, diag, robust } = fitted;
  const { spec, data, design, fit, weights } = ctx;
  const { n, p } = design;
  const df = fit.dfResidual;
  const sigma2 = fit.sigma * fit.sigma;
  const modelCov = fit.unscaledCovariance.map((v) => v * sigma2);
  const covarianceType = options.covariance ?? "model";
  const cov = covarianceType === "model" ? modelCov : (robust.full[covarianceType] as Float64Array);
  const q = tQuantile(0.975, df);
  const termOf = new Map<number, string>();
  for (const t of design.terms) for (const c of t.columns) termOf.set(c, t.label);
  const coefficients: CoefficientRow[] = design.names.map((name, j) => {
    const estimate = fit.coefficients[j];
    const se = Math.sqrt(cov[j * p + j]);
    const statistic = estimate / se;
    return {
      name,
      term: termOf.get(j) ?? null,
      estimate,
      se,
      statistic,
      p: tTwoSided(statistic, df),
      lower: estimate - q * se,
      upper: estimate + q * se,
    };
  });

  // R², F (weighted sums of squares of the fitted linear predictor, as is usual for weighted fits)
  const w = weights;
  const mss = modelSumOfSquares(n, fit.fitted, data.offset, w, design.intercept);
  const rss = fit.rss;
  const dfInt = design.intercept ? 1 : 0;
  const rSquared = mss / (mss + rss);
  const adjRSquared = 1 - ((1 - rSquared) * (n - dfInt)) / df;
  const fDf1 = p - dfInt;
  const fStatistic = fDf1 > 0 ? mss / fDf1 / sigma2 : null;
  const sumLogW = w ? sumOfLogs(n, w) : 0;
  const logLikelihood = 0.5 * (sumLogW - n * (Math.log(2 * Math.PI) + 1 - Math.log(n) + Math.log(rss)));

  const scaled = fit.weightedResiduals;
  const tests: AssumptionTests = {
    ...normalityTests(scaled),
    breuschPagan: fitted.breuschPagan,
    reset: fitted.reset,
  };
  const hos = fitted.homogeneityOfSlopes;
  const treatment = spec.treatment ? data.variables.get(spec.treatment) : undefined;
  const treatmentTerm = spec.treatment
    ? design.terms.find((t) => t.kind !== "interaction" && t.variables[0] === spec.treatment)
    : undefined;
  const treatmentProblem = spec.treatment
    ? treatmentTestProblem(
        spec.treatment,
        design.terms.filter((t) => t.kind === "interaction").map((t) => t.variables),
      )
    : null;
  const treatmentTest: TreatmentFTest | undefined = treatmentTerm
    ? treatmentProblem
      ? {
          term: treatmentTerm.label,
          statistic: null,
          df1: treatmentTerm.columns.length,
          df2: df,
          p: null,
          reason: treatmentProblem,
        }
      : waldF(treatmentTerm.label, fit.coefficients, modelCov, p, treatmentTerm.columns, df)
    : undefined;
  const fullTests: AssumptionTests =
    treatment && treatment.kind === "categorical"
      ? {
          ...tests,
          ...(hos ? { homogeneityOfSlopes: hos } : {}),
          brownForsythe: brownForsythe(scaled, treatment.codes, treatment.levels.length),
          ...(treatmentTest ? { treatment: treatmentTest } : {}),
        }
      : tests;
  const means = adjustedMeans(
    ctx,
    cov,
    robust.full.HC3 ?? new Float64Array(p * p).fill(NaN),
    options.meansWeighting ?? spec.means ?? "equal",
    {
      set: spec.contrasts ?? "reference",
      multiplicity: spec.multiplicity ?? "none",
    },
  );

  // the per-row columns as plain arrays first, the per-term ones last: the more is allocated
  // after Q was let go, the likelier its 400 MB (at 1 000 000 × 50) are collected before the
  // per-term columns are made
  const columns = {
    row: usedRowNumbers(data),
    id: [...data.ids],
    response: toNumbers(data.response),
    weight: w ? toNumbers(w) : null,
    fitted: toNumbers(fit.fitted),
    residual: toNumbers(fit.residuals),
    scaledResidual: toNumbers(scaled),
    leverage: toNumbers(diag.leverage),
    studentizedInternal: toNumbers(diag.studentizedInternal),
    studentizedExternal: toNumbers(diag.studentizedExternal),
    cooksDistance: toNumbers(diag.cooksDistance),
    dffits: toNumbers(diag.dffits),
  };
  const qqShape = readQqShape(diag.studentizedInternal);
  const partial = partialResidualsOfColumns(
    designColumnSource(design, data),
    n,
    design.terms.map((t) => t.columns),
    fit.coefficients,
    fit.residuals,
  );
  const partialResidualColumns = design.terms.map((t, k) => ({ term: t.label, values: partial[k] }));

  return {
    kind: "linear",
    engineVersion: ENGINE_VERSION,
    caution: RESULTS_CAUTION,
    method: options.method ?? {
      kind: "planned",
      description: "planned model, least squares" + (data.weights ? " with prior weights" : ""),
    },
    spec,
    family: "gaussian",
    link: "identity",
    n,
    excluded: data.excludedRows.length,
    excludedRows: [...data.excludedRows],
    rank: p,
    dfResidual: df,
    variables: [...data.variables.values()].map(summarizeVariable),
    terms: design.terms.map((t) => ({
      label: t.label,
      kind: t.kind,
      coefficients: t.columns.map((c) => design.names[c]),
    })),
    coefficients,
    covariance: toMatrix(cov, p),
    covarianceType,
    modelSE: diagonalRoots(modelCov, p),
    robustSE: {
      HC0: roots(robust.diagonal.HC0),
      HC1: roots(robust.diagonal.HC1),
      HC2: roots(robust.diagonal.HC2),
      HC3: roots(robust.diagonal.HC3),
    },
    fit: {
      sigma: fit.sigma,
      rSquared,
      adjRSquared,
      fStatistic,
      fDf1,
      fDf2: df,
      fP: fStatistic === null ? null : fUpper(fStatistic, fDf1, df),
      rss,
      logLikelihood,
      aic: -2 * logLikelihood + 2 * (p + 1),
    },
    observations: { ...columns, dfbetas: [...diag.dfbetas], partialResiduals: partialResidualColumns },
    tests: fullTests,
    vif: varianceInflation(design, fit.unscaledCovariance),
    vifByPredictor: predictorVarianceInflation(design, fit.unscaledCovariance),
    qqShape,
    adjustedMeans: means ? [...means.means] : null,
    contrasts: means ? [...means.contrasts] : null,
    adjustedMeansWeighting: means ? means.weighting : null,
    adjustedMeansGrid: means ? means.grid : null,
    contrastSet: means ? means.contrastSet : null,
    multiplicity: means ? means.multiplicity : null,
  };
}
