/**
 * Ordinary and weighted least squares through the Householder QR of the weighted design
 * √W X (Golub and Van Loan 2013, section 5.3), with one step of iterative refinement of the
 * coefficients on the residual (Björck 1996, Numerical Methods for Least Squares Problems, 2.9).
 * The n×n hat matrix is never formed and X'X is never inverted.
 *
 * With `overwriteDesign` the design's own storage becomes Q: one n×p array less at peak. Given
 * `designColumns`, which writes the design's columns again on demand, the refinement step and the
 * fitted values read the columns from it (the same arithmetic, so the same bits as with the
 * design kept); without it (large-data mode) the refinement step is left out.
 */
import {
  applyQt,
  crossInverse,
  formThinQ,
  householderQR,
  invertUpper,
  solveUpper,
  thinQtVector,
  upperR,
} from "./qr";

export interface LeastSquaresFit {
  readonly n: number;
  readonly p: number;
  readonly coefficients: Float64Array;
  /** R of √W X = QR (p×p, column-major, upper triangular). */
  readonly r: Float64Array;
  readonly rInverse: Float64Array;
  /** (X'WX)⁻¹ = R⁻¹R⁻ᵀ, p×p column-major. */
  readonly unscaledCovariance: Float64Array;
  /** Thin Q of √W X (n×p, column-major). */
  readonly q: Float64Array;
  /** Xb + offset. */
  readonly fitted: Float64Array;
  /** y − fitted. */
  readonly residuals: Float64Array;
  /** √w (y − fitted); equal to the residuals without weights. */
  readonly weightedResiduals: Float64Array;
  readonly sqrtWeights: Float64Array | null;
  /** Σ w e². */
  readonly rss: number;
  readonly dfResidual: number;
  /** √(rss / dfResidual). */
  readonly sigma: number;
  /** True when the design's storage was reused for Q (large-data mode): the design is gone. */
  readonly designOverwritten: boolean;
}

export interface LeastSquaresInput {
  /** Column-major n×p design (not modified). */
  readonly x: Float64Array;
  readonly n: number;
  readonly p: number;
  readonly y: Float64Array;
  readonly weights?: Float64Array | null;
  readonly offset?: Float64Array | null;
}

/** X b for column-major X (n×p), four columns per pass over the result. */
export function multiply(x: Float64Array, n: number, p: number, b: ArrayLike<number>): Float64Array {
  const out = new Float64Array(n);
  let j = 0;
  for (; j + 3 < p; j += 4) {
    const b0 = b[j],
      b1 = b[j + 1],
      b2 = b[j + 2],
      b3 = b[j + 3];
    const o0 = j * n,
      o1 = o0 + n,
      o2 = o1 + n,
      o3 = o2 + n;
    for (let i = 0; i < n; i++) out[i] += x[o0 + i] * b0 + x[o1 + i] * b1 + x[o2 + i] * b2 + x[o3 + i] * b3;
  }
  for (; j < p; j++) {
    const bj = b[j];
    const o = j * n;
    for (let i = 0; i < n; i++) out[i] += x[o + i] * bj;
  }
  return out;
}

/**
 * Design column j (unweighted, length n): either an array that already holds it (a variable's
 * values) or `scratch` with the column written into it. The returned array is only read.
 */
export type DesignColumnSource = (j: number, scratch: Float64Array) => Float64Array;

/** X b with X's columns read from `column`, four at a time: the arithmetic of `multiply`. */
export function multiplyColumns(
  column: DesignColumnSource,
  n: number,
  p: number,
  b: ArrayLike<number>,
): Float64Array {
  const out = new Float64Array(n);
  const scratch = new Float64Array(n * Math.min(p, 4));
  const part = (t: number) => scratch.subarray(t * n, (t + 1) * n);
  let j = 0;
  for (; j + 3 < p; j += 4) {
    const x0 = column(j, part(0)),
      x1 = column(j + 1, part(1)),
      x2 = column(j + 2, part(2)),
      x3 = column(j + 3, part(3));
    const b0 = b[j],
      b1 = b[j + 1],
      b2 = b[j + 2],
      b3 = b[j + 3];
    for (let i = 0; i < n; i++) out[i] += x0[i] * b0 + x1[i] * b1 + x2[i] * b2 + x3[i] * b3;
  }
  for (; j < p; j++) {
    const x = column(j, part(0));
    const bj = b[j];
    for (let i = 0; i < n; i++) out[i] += x[i] * bj;
  }
  return out;
}

export type LeastSquaresOutcome =
  | { readonly ok: true; readonly fit: LeastSquaresFit }
  | { readonly ok: false; readonly aliased: readonly number[] };

/** Fits y on X by (weighted) least squares; reports aliased columns instead of fitting around them. */
export function leastSquares(
  input: LeastSquaresInput,
  tolerance?: number,
  options: { overwriteDesign?: boolean; designColumns?: DesignColumnSource } = {},
): LeastSquaresOutcome {
  const { x, n, p, y } = input;
  const overwrite = options.overwriteDesign === true;
  const regenerate = overwrite ? options.designColumns : undefined;
  const sw = input.weights ? input.weights.map(Math.sqrt) : null;
  const xw = overwrite ? x : new Float64Array(x);
  if (sw) for (let j = 0; j < p; j++) scaleRows(xw, j * n, n, sw);
  const z = workingResponse(n, y, input.offset ?? null, sw);

  const qty = new Float64Array(z);
  const f = householderQR(xw, n, p, { inPlace: true, tolerance, rhs: qty });
  if (f.aliased.length > 0) return { ok: false, aliased: f.aliased };
  const r = upperR(f);
  const b = qty.slice(0, p);
  solveUpper(r, p, b);
  const q = formThinQ(f, true);

  let fitted: Float64Array;
  if (overwrite && !regenerate) {
    // large-data mode: √W X b = Q R b
    const rb = new Float64Array(p);
    for (let i = 0; i < p; i++) {
      let s = 0;
      for (let j = i; j < p; j++) s += r[j * p + i] * b[j];
      rb[i] = s;
    }
    fitted = multiply(q, n, p, rb);
    if (sw) divideRows(fitted, n, sw);
  } else {
    // one refinement step: b += R⁻¹ Q' (z − √W X b)
    const times = (v: Float64Array) =>
      regenerate ? multiplyColumns(regenerate, n, p, v) : multiply(x, n, p, v);
    const delta = thinQtVector(q, n, p, weightedResidual(times(b), n, z, sw));
    solveUpper(r, p, delta);
    for (let j = 0; j < p; j++) b[j] += delta[j];
    fitted = times(b);
  }
  const residuals = new Float64Array(n);
  const weighted = new Float64Array(n);
  const rss = residualRows(n, y, input.offset ?? null, sw, fitted, residuals, weighted);
  const rInverse = invertUpper(r, p);
  const unscaledCovariance = crossInverse(rInverse, p);
  const dfResidual = n - p;
  return {
    ok: true,
    fit: {
      n,
      p,
      coefficients: b,
      r,
      rInverse,
      unscaledCovariance,
      q,
      fitted,
      residuals,
      weightedResiduals: weighted,
      sqrtWeights: sw,
      rss,
      dfResidual,
      sigma: Math.sqrt(rss / dfResidual),
      designOverwritten: overwrite,
    },
  };
}

// The loops over rows below are small functions of their own, which the JavaScript engine
// optimizes once and keeps (inside leastSquares they were recompiled during every fit).

/** x[off + i] *= s[i] for the n rows of one column. */
function scaleRows(x: Float64Array, off: number, n: number, s: Float64Array): void {
  for (let i = 0; i < n; i++) x[off + i] *= s[i];
}

/** x[i] /= s[i]. */
function divideRows(x: Float64Array, n: number, s: Float64Array): void {
  for (let i = 0; i < n; i++) x[i] /= s[i];
}

/** z = √w (y − offset). */
function workingResponse(
  n: number,
  y: Float64Array,
  offset: Float64Array | null,
  sw: Float64Array | null,
): Float64Array {
  const z = new Float64Array(n);
  for (let i = 0; i < n; i++) z[i] = (y[i] - (offset ? offset[i] : 0)) * (sw ? sw[i] : 1);
  return z;
}

/** Adds the offset to the fitted values, writes e = y − ŷ and √w e; returns Σ w e². */
function residualRows(
  n: number,
  y: Float64Array,
  offset: Float64Array | null,
  sw: Float64Array | null,
  fitted: Float64Array,
  residuals: Float64Array,
  weighted: Float64Array,
): number {
  let rss = 0;
  for (let i = 0; i < n; i++) {
    if (offset) fitted[i] += offset[i];
    residuals[i] = y[i] - fitted[i];
    weighted[i] = sw ? residuals[i] * sw[i] : residuals[i];
    rss += weighted[i] * weighted[i];
  }
  return rss;
}

/** z − √W (X b), written over X b. */
function weightedResidual(
  xb: Float64Array,
  n: number,
  z: Float64Array,
  sw: Float64Array | null,
): Float64Array {
  const out = xb;
  if (sw) for (let i = 0; i < n; i++) out[i] = z[i] - sw[i] * out[i];
  else for (let i = 0; i < n; i++) out[i] = z[i] - out[i];
  return out;
}

/**
 * Residual sum of squares Σ w e² of a (weighted) least-squares fit, and its rank; used by the
 * nested-model F tests. Aliased columns are dropped, as in a fit with pivoting.
 */
export function residualSumOfSquares(input: LeastSquaresInput): { rss: number; rank: number } {
  const { x, n, p, y } = input;
  const xw = new Float64Array(x);
  const z = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const s = input.weights ? Math.sqrt(input.weights[i]) : 1;
    z[i] = (y[i] - (input.offset ? input.offset[i] : 0)) * s;
    if (input.weights) for (let j = 0; j < p; j++) xw[j * n + i] *= s;
  }
  const f = householderQR(xw, n, p, { inPlace: true });
  applyQt(f, z);
  let rss = 0;
  for (let i = f.rank; i < n; i++) rss += z[i] * z[i];
  return { rss, rank: f.rank };
}
