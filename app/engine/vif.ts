/**
 * Generalized variance inflation factors (Fox and Monette 1992, JASA 87, 178–183):
 * GVIF = det(R₁₁) det(R₂₂) / det(R) for the correlation matrix R of the coefficient estimates
 * (intercept removed), term columns in block 1; equal to the ordinary VIF for a one-column
 * term. GVIF^(1/(2·df)) makes terms with different df comparable.
 *
 * Term-wise values are not invariant to centring when a term appears in an interaction: a
 * treatment that interacts with an uncentred covariate gets a large term-wise GVIF although
 * nothing is collinear. The predictor-wise GVIF (Fox and Monette 1992, section 4; the rule of
 * car::vif(type = "predictor")) takes, for each variable, the block of every term made only of
 * that variable and the variables it interacts with, against the rest; a block closed under
 * such products is invariant to centring and coding, so the collinearity check reads it.
 * car gives it for unweighted linear models only; here the same block rule is applied to the
 * correlation of the coefficient estimates, which for a GLM is the weighted analogue.
 */
import type { Design } from "./design";

export interface VifRow {
  /** The term's label (an interaction: its parts joined by " by "). */
  readonly term: string;
  readonly gvif: number;
  readonly df: number;
  /** GVIF^(1/(2·df)). */
  readonly adjusted: number;
}

export interface PredictorVifRow {
  /** The variable. */
  readonly predictor: string;
  /** The variables it interacts with (empty when it is in no interaction). */
  readonly interactsWith: readonly string[];
  readonly gvif: number;
  /** Columns in the block: the variable's terms and those of the variables it interacts with. */
  readonly df: number;
  /** GVIF^(1/(2·df)). */
  readonly adjusted: number;
}

/** log det of a symmetric positive-definite matrix (row-major k×k) by Cholesky; NaN if not positive definite. */
function logDet(m: Float64Array, k: number): number {
  const l = new Float64Array(m);
  let sum = 0;
  for (let j = 0; j < k; j++) {
    let d = l[j * k + j];
    for (let t = 0; t < j; t++) d -= l[j * k + t] * l[j * k + t];
    if (!(d > 0)) return NaN;
    const root = Math.sqrt(d);
    l[j * k + j] = root;
    sum += Math.log(d);
    for (let i = j + 1; i < k; i++) {
      let s = l[i * k + j];
      for (let t = 0; t < j; t++) s -= l[i * k + t] * l[j * k + t];
      l[i * k + j] = s / root;
    }
  }
  return sum;
}

function submatrix(r: Float64Array, k: number, idx: readonly number[]): Float64Array {
  const out = new Float64Array(idx.length * idx.length);
  idx.forEach((a, i) => idx.forEach((b, j) => (out[i * idx.length + j] = r[a * k + b])));
  return out;
}

/** Correlation matrix of the coefficient estimates without the intercept, and the column map. */
function coefficientCorrelation(
  design: Design,
  unscaledCovariance: Float64Array,
): { corr: Float64Array; cols: number[]; k: number } {
  const p = design.p;
  const cols = Array.from({ length: p }, (_, j) => j).filter((j) => !(design.intercept && j === 0));
  const k = cols.length;
  const corr = new Float64Array(k * k);
  for (let a = 0; a < k; a++) {
    for (let b = 0; b < k; b++) {
      const ca = cols[a];
      const cb = cols[b];
      corr[a * k + b] =
        unscaledCovariance[cb * p + ca] /
        Math.sqrt(unscaledCovariance[ca * p + ca] * unscaledCovariance[cb * p + cb]);
    }
  }
  return { corr, cols, k };
}

/** GVIF of one block of positions (into the correlation matrix) against the rest. */
function blockGvif(corr: Float64Array, k: number, inside: readonly number[], full: number): number {
  const outside = Array.from({ length: k }, (_, i) => i).filter((i) => !inside.includes(i));
  if (outside.length === 0) return 1;
  const logG =
    logDet(submatrix(corr, k, inside), inside.length) +
    logDet(submatrix(corr, k, outside), outside.length) -
    full;
  return Math.exp(logG);
}

/** GVIF per term from the unscaled covariance (X'WX)⁻¹ (p×p, column-major). */
export function varianceInflation(design: Design, unscaledCovariance: Float64Array): VifRow[] {
  const { corr, cols, k } = coefficientCorrelation(design, unscaledCovariance);
  const full = logDet(corr, k);
  return design.terms.map((term) => {
    const gvif = blockGvif(
      corr,
      k,
      term.columns.map((c) => cols.indexOf(c)),
      full,
    );
    const df = term.columns.length;
    return { term: term.label, gvif, df, adjusted: Math.pow(gvif, 1 / (2 * df)) };
  });
}

/** Predictor-wise GVIF, one row per variable of the model, in the order the terms first name them. */
export function predictorVarianceInflation(
  design: Design,
  unscaledCovariance: Float64Array,
): PredictorVifRow[] {
  const { corr, cols, k } = coefficientCorrelation(design, unscaledCovariance);
  const full = logDet(corr, k);
  const predictors: string[] = [];
  for (const t of design.terms) for (const v of t.variables) if (!predictors.includes(v)) predictors.push(v);
  return predictors.map((predictor) => {
    const related = new Set<string>([predictor]);
    for (const t of design.terms)
      if (t.variables.includes(predictor)) t.variables.forEach((v) => related.add(v));
    // the block: every term all of whose variables are related to this predictor
    const inside = design.terms
      .filter((t) => t.variables.every((v) => related.has(v)))
      .flatMap((t) => t.columns.map((c) => cols.indexOf(c)))
      .filter((i) => i >= 0);
    const gvif = blockGvif(corr, k, inside, full);
    const df = inside.length;
    return {
      predictor,
      interactsWith: [...related].filter((v) => v !== predictor),
      gvif,
      df,
      adjusted: Math.pow(gvif, 1 / (2 * df)),
    };
  });
}
