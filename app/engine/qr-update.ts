/**
 * Columns appended to a fitted least-squares model without refitting it: the nested-model tests
 * (RESET, homogeneity of slopes) add a few columns Z to the design X of the planned fit. With the
 * fit's thin Q of √W X, the added columns are reduced to their part orthogonal to X
 * (Z⊥ = (I − QQ')√W Z, classical Gram–Schmidt applied twice, which keeps Z⊥ orthogonal to Q to
 * working precision: Giraud, Langou and Rozložník 2005), then only Z⊥ is factored (Householder,
 * qr.ts). This is the column-appending QR update of Golub and Van Loan (Matrix Computations,
 * 4th ed., section 6.5.2) in its Gram–Schmidt form: the work is O(n·p·k) for k added columns
 * instead of a new O(n·(p+k)²) factorization, and no copy of the n×p design is made.
 *
 * A column counts as aliased with the model exactly as in a full factorization: when its
 * remaining norm is at most the tolerance times its own norm (R's dqrdc2 rule, qr.ts).
 */
import type { LeastSquaresFit } from "./least-squares";
import { multiply } from "./least-squares";
import { ALIAS_TOLERANCE, columnNorm, householderQR, thinQtVector } from "./qr";

export interface AppendedFit {
  /** Σ w e² of the larger model. */
  readonly rss: number;
  /** Rank of the larger model: the fit's p plus the added columns kept. */
  readonly rank: number;
}

/** Removes from column `c` of `z` (n rows) its projection on the columns of q (n×p). */
function projectOut(q: Float64Array, n: number, p: number, z: Float64Array, c: number): void {
  const col = z.subarray(c * n, (c + 1) * n);
  const coef = thinQtVector(q, n, p, col);
  const along = multiply(q, n, p, coef);
  for (let i = 0; i < n; i++) col[i] -= along[i];
}

/**
 * The residual sum of squares and rank of the fit with the k columns of `z` (column-major n×k,
 * unweighted, overwritten) appended to its design.
 */
export function appendColumns(fit: LeastSquaresFit, z: Float64Array, k: number, tolerance = ALIAS_TOLERANCE): AppendedFit {
  const { n, p, q } = fit;
  const sw = fit.sqrtWeights;
  const work = z.subarray(0, n * k);
  const norms = new Float64Array(k);
  for (let c = 0; c < k; c++) {
    if (sw) for (let i = 0, o = c * n; i < n; i++) work[o + i] *= sw[i];
    norms[c] = columnNorm(work, n, c * n, 0);
    projectOut(q, n, p, work, c);
    projectOut(q, n, p, work, c);
  }
  // the planned fit's residuals, kept exactly orthogonal to Q as well
  const e = new Float64Array(fit.weightedResiduals);
  const coef = thinQtVector(q, n, p, e);
  const along = multiply(q, n, p, coef);
  for (let i = 0; i < n; i++) e[i] -= along[i];
  const f = householderQR(work, n, k, { inPlace: true, tolerance, rhs: e, originalNorms: norms });
  let rss = 0;
  for (let i = f.rank; i < n; i++) rss += e[i] * e[i];
  return { rss, rank: p + f.rank };
}
