/**
 * Columns appended to a fitted least-squares model without refitting it: the nested-model tests
 * (RESET, homogeneity of slopes) add a few columns Z to the design X of the planned fit. With the
 * fit's thin Q of √W X, the added columns are reduced to their part orthogonal to X
 * (Z⊥ = (I − QQ')√W Z by classical Gram–Schmidt, a second time for a column that lost most of
 * its norm, which keeps Z⊥ orthogonal to Q to working precision: Giraud, Langou and Rozložník 2005), then only Z⊥ is factored (Householder,
 * qr.ts). Columns reduced once serve several nested models (each covariate's slopes, then all). This is the column-appending QR update of Golub and Van Loan (Matrix Computations,
 * 4th ed., section 6.5.2) in its Gram–Schmidt form: the work is O(n·p·k) for k added columns
 * instead of a new O(n·(p+k)²) factorization, and no copy of the n×p design is made.
 *
 * A column counts as aliased with the model exactly as in a full factorization: when its
 * remaining norm is at most the tolerance times its own norm (R's dqrdc2 rule, qr.ts).
 */
import type { LeastSquaresFit } from "./least-squares";
import { ALIAS_TOLERANCE, columnNorm, householderQR } from "./qr";

export interface AppendedFit {
  /** Σ w e² of the larger model. */
  readonly rss: number;
  /** Rank of the larger model: the fit's p plus the added columns kept. */
  readonly rank: number;
}

/** Rows per chunk: a chunk of Q and of the added columns stays in cache while they are combined. */
const CHUNK = 256;

/**
 * Removes from the columns `cols` of z (n rows) their projection on the columns of q (n×p): C = Q'Z,
 * then Z −= Q C, a chunk of rows at a time (Q is read from memory once per pass, not once per
 * added column). Four columns of Q share each pass over a chunk, each sum and each row's
 * subtractions kept in their order (the same bits as one column at a time).
 */
function projectOut(q: Float64Array, n: number, p: number, z: Float64Array, cols: readonly number[]): void {
  const k = cols.length;
  const c = new Float64Array(p * k);
  for (let r0 = 0; r0 < n; r0 += CHUNK) {
    const r1 = Math.min(n, r0 + CHUNK);
    for (let a = 0; a < k; a++) addProducts(q, n, p, z, cols[a] * n, r0, r1, c, a * p);
  }
  for (let r0 = 0; r0 < n; r0 += CHUNK) {
    const r1 = Math.min(n, r0 + CHUNK);
    for (let a = 0; a < k; a++) subtractCombination(q, n, p, z, cols[a] * n, r0, r1, c, a * p);
  }
}

/** c[co + j] += Σ_{r0 ≤ i < r1} Q[i, j] z[za + i] for every j. */
function addProducts(
  q: Float64Array,
  n: number,
  p: number,
  z: Float64Array,
  za: number,
  r0: number,
  r1: number,
  c: Float64Array,
  co: number,
): void {
  let j = 0;
  for (; j + 3 < p; j += 4) {
    const q0 = j * n,
      q1 = q0 + n,
      q2 = q1 + n,
      q3 = q2 + n;
    let s0 = 0,
      s1 = 0,
      s2 = 0,
      s3 = 0;
    for (let i = r0; i < r1; i++) {
      const zi = z[za + i];
      s0 += q[q0 + i] * zi;
      s1 += q[q1 + i] * zi;
      s2 += q[q2 + i] * zi;
      s3 += q[q3 + i] * zi;
    }
    c[co + j] += s0;
    c[co + j + 1] += s1;
    c[co + j + 2] += s2;
    c[co + j + 3] += s3;
  }
  for (; j < p; j++) {
    const qj = j * n;
    let s = 0;
    for (let i = r0; i < r1; i++) s += q[qj + i] * z[za + i];
    c[co + j] += s;
  }
}

/** z[za + i] −= Q[i, j] c[co + j] for j = 0, 1, … in turn, rows r0..r1−1. */
function subtractCombination(
  q: Float64Array,
  n: number,
  p: number,
  z: Float64Array,
  za: number,
  r0: number,
  r1: number,
  c: Float64Array,
  co: number,
): void {
  let j = 0;
  for (; j + 3 < p; j += 4) {
    const q0 = j * n,
      q1 = q0 + n,
      q2 = q1 + n,
      q3 = q2 + n;
    const c0 = c[co + j],
      c1 = c[co + j + 1],
      c2 = c[co + j + 2],
      c3 = c[co + j + 3];
    for (let i = r0; i < r1; i++) {
      let v = z[za + i];
      v -= q[q0 + i] * c0;
      v -= q[q1 + i] * c1;
      v -= q[q2 + i] * c2;
      v -= q[q3 + i] * c3;
      z[za + i] = v;
    }
  }
  for (; j < p; j++) {
    const qj = j * n;
    const cj = c[co + j];
    for (let i = r0; i < r1; i++) z[za + i] -= q[qj + i] * cj;
  }
}

/** Added columns reduced against a fit: Z⊥, the norms of √W Z, and the fit's residuals orthogonal to Q. */
export interface ReducedColumns {
  readonly n: number;
  readonly p: number;
  /** n×k column-major, orthogonal to the fit's Q. */
  readonly z: Float64Array;
  readonly k: number;
  readonly norms: Float64Array;
  readonly residuals: Float64Array;
}

/** The planned fit's residuals, kept exactly orthogonal to Q as well: made once per fit (RESET and the slopes share them; never written). */
const orthogonalResiduals = new WeakMap<LeastSquaresFit, Float64Array>();

function residualsOrthogonalToQ(fit: LeastSquaresFit): Float64Array {
  let e = orthogonalResiduals.get(fit);
  if (!e) {
    e = new Float64Array(fit.weightedResiduals);
    projectOut(fit.q, fit.n, fit.p, e, [0]);
    orthogonalResiduals.set(fit, e);
  }
  return e;
}

/** Weights and reduces the k columns of `z` (column-major n×k, unweighted; overwritten) against the fit. */
export function reduceColumns(fit: LeastSquaresFit, z: Float64Array, k: number): ReducedColumns {
  const { n, p, q } = fit;
  const sw = fit.sqrtWeights;
  const work = z.subarray(0, n * k);
  const norms = new Float64Array(k);
  for (let c = 0; c < k; c++) {
    if (sw) for (let i = 0, o = c * n; i < n; i++) work[o + i] *= sw[i];
    norms[c] = columnNorm(work, n, c * n, 0);
  }
  const every = Array.from({ length: k }, (_, c) => c);
  projectOut(q, n, p, work, every);
  // a second pass for the columns that lost most of their norm to Q, where the first leaves
  // them measurably off orthogonal (the criterion of Daniel, Gragg, Kaufman and Stewart 1976)
  const again = every.filter((c) => columnNorm(work, n, c * n, 0) < Math.SQRT1_2 * norms[c]);
  if (again.length > 0) projectOut(q, n, p, work, again);
  return { n, p, z: work, k, norms, residuals: residualsOrthogonalToQ(fit) };
}

/**
 * The residual sum of squares and rank of the fit with some of the reduced columns appended
 * (`columns`, in order; all of them when omitted, which factors `reduced.z` in place: call it last).
 */
export function fitWithReduced(
  reduced: ReducedColumns,
  columns?: readonly number[],
  tolerance = ALIAS_TOLERANCE,
): AppendedFit {
  const { n, p } = reduced;
  let z = reduced.z;
  let norms = reduced.norms;
  if (columns) {
    z = new Float64Array(n * columns.length);
    norms = new Float64Array(columns.length);
    columns.forEach((c, j) => {
      z.set(reduced.z.subarray(c * n, (c + 1) * n), j * n);
      norms[j] = reduced.norms[c];
    });
  }
  const k = columns ? columns.length : reduced.k;
  const e = new Float64Array(reduced.residuals);
  const f = householderQR(z, n, k, { inPlace: true, tolerance, rhs: e, originalNorms: norms });
  let rss = 0;
  for (let i = f.rank; i < n; i++) rss += e[i] * e[i];
  return { rss, rank: p + f.rank };
}

/**
 * The residual sum of squares and rank of the fit with the k columns of `z` (column-major n×k,
 * unweighted, overwritten) appended to its design.
 */
export function appendColumns(
  fit: LeastSquaresFit,
  z: Float64Array,
  k: number,
  tolerance = ALIAS_TOLERANCE,
): AppendedFit {
  return fitWithReduced(reduceColumns(fit, z, k), undefined, tolerance);
}
