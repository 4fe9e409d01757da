/**
 * Householder QR of a column-major n×p Float64Array (Golub and Van Loan, Matrix Computations,
 * 4th ed., algorithms 5.1.1 and 5.2.1; Q formed in place by backward accumulation as in LAPACK
 * dorg2r). A column whose remaining norm falls below `tolerance` times its original norm is
 * aliased with the columns before it: it is set aside (as R's dqrdc2 limited pivoting does) and
 * reported, and the factorization continues with the next column.
 *
 * A hand-written loop on the column-major array is used rather than ml-matrix: its QR of a
 * 200 000×25 matrix measured about 5× slower, and forming Q slower still, because of its
 * row-array layout.
 */

export interface HouseholderQR {
  readonly n: number;
  /** Number of columns of the input. */
  readonly p: number;
  /** Number of columns kept (the rank). */
  readonly rank: number;
  /** Input column index of each kept column, in order. */
  readonly kept: readonly number[];
  /** Input column indices found aliased with earlier columns. */
  readonly aliased: readonly number[];
  /** n×rank, column-major: R on and above the diagonal, reflector vectors below (unit diagonal implied). */
  readonly qr: Float64Array;
  readonly tau: Float64Array;
}

/** Default tolerance for declaring a column aliased (the value lm uses). */
export const ALIAS_TOLERANCE = 1e-7;

/**
 * Factors `a` (column-major n×p). `a` is overwritten when `inPlace` is true, otherwise copied.
 */
export function householderQR(
  a: Float64Array,
  n: number,
  p: number,
  options: { tolerance?: number; inPlace?: boolean } = {},
): HouseholderQR {
  const tol = options.tolerance ?? ALIAS_TOLERANCE;
  const w = options.inPlace ? a : new Float64Array(a);
  const originalNorm = new Float64Array(p);
  for (let j = 0; j < p; j++) originalNorm[j] = columnNorm(w, n, j * n, 0);
  const tau = new Float64Array(Math.min(n, p));
  const kept: number[] = [];
  const aliased: number[] = [];
  let k = 0; // current rank
  for (let j = 0; j < p; j++) {
    const src = j * n;
    const remaining = k < n ? columnNorm(w, n, src, k) : 0;
    if (k >= n || remaining <= tol * originalNorm[j] || remaining === 0) {
      aliased.push(j);
      continue;
    }
    const dst = k * n;
    if (src !== dst) {
      w.copyWithin(dst, src, src + n);
    }
    // reflector H = I - tau v v' with v[k] = 1 that maps column k (rows k..n-1) to beta e_k
    const alpha = w[dst + k];
    const beta = alpha >= 0 ? -remaining : remaining;
    const t = (beta - alpha) / beta;
    const scale = 1 / (alpha - beta);
    for (let i = k + 1; i < n; i++) w[dst + i] *= scale;
    w[dst + k] = beta;
    tau[k] = t;
    // apply to the later columns, still at their original positions
    for (let jj = j + 1; jj < p; jj++) applyReflector(w, n, dst, k, t, w, jj * n);
    kept.push(j);
    k++;
  }
  return { n, p, rank: k, kept, aliased, qr: w.subarray(0, k * n), tau: tau.subarray(0, k) };
}

function columnNorm(w: Float64Array, n: number, offset: number, from: number): number {
  // scaled sum of squares (as in LAPACK dnrm2) so that very large or small columns do not overflow
  let scale = 0;
  let ssq = 1;
  for (let i = from; i < n; i++) {
    const v = w[offset + i];
    if (v !== 0) {
      const a = Math.abs(v);
      if (scale < a) {
        ssq = 1 + ssq * (scale / a) * (scale / a);
        scale = a;
      } else {
        ssq += (a / scale) * (a / scale);
      }
    }
  }
  return scale * Math.sqrt(ssq);
}

/** Applies H_k (vector stored at column offset `v`, unit at row k) to the column at `c` of `target`. */
function applyReflector(
  qr: Float64Array,
  n: number,
  v: number,
  k: number,
  t: number,
  target: Float64Array,
  c: number,
): void {
  let dot = target[c + k];
  for (let i = k + 1; i < n; i++) dot += qr[v + i] * target[c + i];
  if (dot === 0) return;
  const s = t * dot;
  target[c + k] -= s;
  for (let i = k + 1; i < n; i++) target[c + i] -= s * qr[v + i];
}

/** Overwrites y (length n) with Q'y. */
export function applyQt(f: HouseholderQR, y: Float64Array): void {
  for (let k = 0; k < f.rank; k++) applyReflector(f.qr, f.n, k * f.n, k, f.tau[k], y, 0);
}

/** Overwrites y (length n) with Q y. */
export function applyQ(f: HouseholderQR, y: Float64Array): void {
  for (let k = f.rank - 1; k >= 0; k--) applyReflector(f.qr, f.n, k * f.n, k, f.tau[k], y, 0);
}

/** The upper triangular R (rank×rank, column-major). */
export function upperR(f: HouseholderQR): Float64Array {
  const r = f.rank;
  const out = new Float64Array(r * r);
  for (let j = 0; j < r; j++) for (let i = 0; i <= j; i++) out[j * r + i] = f.qr[j * f.n + i];
  return out;
}

/**
 * Forms the thin Q (n×rank, column-major). With `inPlace` the factorization's storage is reused
 * (the factorization is no longer usable afterwards; take R first).
 */
export function formThinQ(f: HouseholderQR, inPlace = false): Float64Array {
  const { n, rank } = f;
  const a = inPlace ? f.qr : new Float64Array(f.qr);
  for (let k = rank - 1; k >= 0; k--) {
    const v = k * n;
    const t = f.tau[k];
    // columns j > k already hold Q's columns restricted to rows k+1..n-1 (rows <= k are zero)
    for (let j = k + 1; j < rank; j++) {
      const c = j * n;
      let dot = 0;
      for (let i = k + 1; i < n; i++) dot += a[v + i] * a[c + i];
      const s = t * dot;
      a[c + k] = -s;
      if (s !== 0) for (let i = k + 1; i < n; i++) a[c + i] -= s * a[v + i];
    }
    for (let i = k + 1; i < n; i++) a[v + i] *= -t;
    a[v + k] = 1 - t;
    for (let i = 0; i < k; i++) a[v + i] = 0;
  }
  return a;
}

/** Solves R x = b in place (R upper triangular, r×r column-major). */
export function solveUpper(rMat: Float64Array, r: number, b: Float64Array): void {
  for (let i = r - 1; i >= 0; i--) {
    let s = b[i];
    for (let j = i + 1; j < r; j++) s -= rMat[j * r + i] * b[j];
    b[i] = s / rMat[i * r + i];
  }
}

/** Inverse of an upper triangular R (r×r column-major), itself upper triangular. */
export function invertUpper(rMat: Float64Array, r: number): Float64Array {
  const inv = new Float64Array(r * r);
  for (let j = 0; j < r; j++) {
    inv[j * r + j] = 1 / rMat[j * r + j];
    for (let i = j - 1; i >= 0; i--) {
      let s = 0;
      for (let k = i + 1; k <= j; k++) s += rMat[k * r + i] * inv[j * r + k];
      inv[j * r + i] = -s / rMat[i * r + i];
    }
  }
  return inv;
}

/** (R'R)⁻¹ = R⁻¹R⁻ᵀ from R⁻¹ (r×r column-major), symmetric, full storage. */
export function crossInverse(rInv: Float64Array, r: number): Float64Array {
  const out = new Float64Array(r * r);
  for (let i = 0; i < r; i++) {
    for (let j = i; j < r; j++) {
      let s = 0;
      for (let k = j; k < r; k++) s += rInv[k * r + i] * rInv[k * r + j];
      out[j * r + i] = s;
      out[i * r + j] = s;
    }
  }
  return out;
}
