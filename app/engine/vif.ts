/**
 * Generalized variance inflation factors (Fox and Monette 1992, JASA 87, 178–183):
 * GVIF = det(R₁₁) det(R₂₂) / det(R) for the correlation matrix R of the coefficient estimates
 * (intercept removed), term columns in block 1; equal to the ordinary VIF for a one-column
 * term. GVIF^(1/(2·df)) makes terms with different df comparable.
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

/** GVIF per term from the unscaled covariance (X'WX)⁻¹ (p×p, column-major). */
export function varianceInflation(design: Design, unscaledCovariance: Float64Array): VifRow[] {
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
  const full = logDet(corr, k);
  return design.terms.map((term) => {
    const inside = term.columns.map((c) => cols.indexOf(c));
    const outside = Array.from({ length: k }, (_, i) => i).filter((i) => !inside.includes(i));
    const logG =
      logDet(submatrix(corr, k, inside), inside.length) +
      (outside.length > 0 ? logDet(submatrix(corr, k, outside), outside.length) : 0) -
      full;
    const gvif = Math.exp(logG);
    const df = term.columns.length;
    return { term: term.label, gvif, df, adjusted: Math.pow(gvif, 1 / (2 * df)) };
  });
}
