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

/** Reflectors per block: the trailing matrix is updated once per block (compact WY form). */
const BLOCK = 4;

/**
 * Factors `a` (column-major n×p). `a` is overwritten when `inPlace` is true, otherwise copied.
 * `rhs` (length n), when given, is overwritten with Q'·rhs along the way.
 *
 * Blocked right-looking algorithm: reflectors are formed four at a time (each candidate column is
 * first brought up to date with the block's earlier reflectors, then tested for aliasing), and the
 * later columns are updated once per block with the compact WY form I − V T V' (Schreiber and
 * Van Loan 1989; LAPACK dgeqrf/dlarft/dlarfb). This reads the trailing matrix once per block
 * instead of once per reflector.
 */
export function householderQR(
  a: Float64Array,
  n: number,
  p: number,
  options: { tolerance?: number; inPlace?: boolean; rhs?: Float64Array; originalNorms?: Float64Array } = {},
): HouseholderQR {
  const tol = options.tolerance ?? ALIAS_TOLERANCE;
  const w = options.inPlace ? a : new Float64Array(a);
  const rhs = options.rhs;
  // the norms the aliasing test compares with: the columns' own, unless they were already
  // reduced by earlier columns (columns appended to a factorization, qr-update.ts)
  const originalNorm = options.originalNorms ?? new Float64Array(p);
  if (!options.originalNorms) for (let j = 0; j < p; j++) originalNorm[j] = columnNorm(w, n, j * n, 0);
  const tau = new Float64Array(Math.min(n, p));
  const kept: number[] = [];
  const aliased: number[] = [];
  const vbuf = new Float64Array(n * BLOCK);
  const tmat = new Float64Array(BLOCK * BLOCK);
  let k = 0; // current rank
  let j = 0; // next candidate column
  while (j < p) {
    const k0 = k;
    while (k - k0 < BLOCK && j < p) {
      const src = j * n;
      // bring the candidate up to date with this block's reflectors so far
      for (let m = k0; m < k; m++) applyReflector(w, n, m * n, m, tau[m], w, src);
      const remaining = k < n ? columnNorm(w, n, src, k) : 0;
      if (k >= n || remaining <= tol * originalNorm[j] || remaining === 0) {
        aliased.push(j);
        j++;
        continue;
      }
      const dst = k * n;
      if (src !== dst) w.copyWithin(dst, src, src + n);
      // reflector H = I − τ v v' with v[k] = 1 that maps column k (rows k..n−1) to β e_k
      const alpha = w[dst + k];
      const beta = alpha >= 0 ? -remaining : remaining;
      const scale = 1 / (alpha - beta);
      scaleRange(w, dst + k + 1, dst + n, scale);
      w[dst + k] = beta;
      tau[k] = (beta - alpha) / beta;
      kept.push(j);
      k++;
      j++;
    }
    if ((j < p || rhs) && k > k0) {
      loadBlock(w, n, k0, k, vbuf);
      blockTriangle(vbuf, n, k0, tau, k0, k, tmat);
      if (j < p) applyBlock(vbuf, n, k0, tmat, true, w, j, p);
      if (rhs) applyBlock(vbuf, n, k0, tmat, true, rhs, 0, 1);
    }
  }
  return { n, p, rank: k, kept, aliased, qr: w.subarray(0, k * n), tau: tau.subarray(0, k) };
}

/**
 * Copies reflectors k0..k1−1 into `vbuf`, row-interleaved (BLOCK values per row from row k0),
 * with the implied unit diagonal and the zeros above it written out; missing reflectors are zero.
 */
function loadBlock(qr: Float64Array, n: number, k0: number, k1: number, vbuf: Float64Array): void {
  const count = k1 - k0;
  // the block's own rows: unit diagonal, zeros above it, reflector entries below
  const top = Math.min(n, k0 + BLOCK);
  vbuf.fill(0, 0, (top - k0) * BLOCK);
  for (let m = 0; m < count; m++) {
    const col = (k0 + m) * n;
    vbuf[m * BLOCK + m] = 1;
    for (let i = k0 + m + 1; i < top; i++) vbuf[(i - k0) * BLOCK + m] = qr[col + i];
  }
  // the rows below, four reflectors per row in one pass
  if (count === BLOCK) interleaveRows(qr, n, k0, top, vbuf);
  else {
    vbuf.fill(0, (top - k0) * BLOCK, (n - k0) * BLOCK);
    for (let m = 0; m < count; m++) {
      const col = (k0 + m) * n;
      for (let i = top; i < n; i++) vbuf[(i - k0) * BLOCK + m] = qr[col + i];
    }
  }
}

/** vbuf row (i − k0) = the four reflectors k0..k0+3 at row i, for rows from..n−1. */
function interleaveRows(qr: Float64Array, n: number, k0: number, from: number, vbuf: Float64Array): void {
  const c0 = k0 * n,
    c1 = c0 + n,
    c2 = c1 + n,
    c3 = c2 + n;
  for (let i = from, r = (from - k0) * BLOCK; i < n; i++, r += BLOCK) {
    vbuf[r] = qr[c0 + i];
    vbuf[r + 1] = qr[c1 + i];
    vbuf[r + 2] = qr[c2 + i];
    vbuf[r + 3] = qr[c3 + i];
  }
}

/** Upper triangular T with H_k0 … H_k1−1 = I − V T V' (LAPACK dlarft, forward, columnwise). */
function blockTriangle(
  vbuf: Float64Array,
  n: number,
  k0: number,
  tau: Float64Array,
  from: number,
  to: number,
  t: Float64Array,
): void {
  t.fill(0);
  const rows = n - k0;
  // Gram matrix V'V (upper triangle), ten sums in one pass
  let g00 = 0,
    g01 = 0,
    g02 = 0,
    g03 = 0,
    g11 = 0,
    g12 = 0,
    g13 = 0,
    g22 = 0,
    g23 = 0,
    g33 = 0;
  for (let r = 0, o = 0; r < rows; r++, o += 4) {
    const v0 = vbuf[o],
      v1 = vbuf[o + 1],
      v2 = vbuf[o + 2],
      v3 = vbuf[o + 3];
    g00 += v0 * v0;
    g01 += v0 * v1;
    g02 += v0 * v2;
    g03 += v0 * v3;
    g11 += v1 * v1;
    g12 += v1 * v2;
    g13 += v1 * v3;
    g22 += v2 * v2;
    g23 += v2 * v3;
    g33 += v3 * v3;
  }
  const gram = Float64Array.of(g00, g01, g02, g03, 0, g11, g12, g13, 0, 0, g22, g23, 0, 0, 0, g33);
  for (let i = 0; i < to - from; i++) {
    const ti = tau[from + i];
    t[i * BLOCK + i] = ti;
    // T[0:i, i] = −τᵢ T[0:i, 0:i] (V[:, 0:i]' vᵢ)
    for (let r = 0; r < i; r++) {
      let s = 0;
      for (let c = r; c < i; c++) s += t[r * BLOCK + c] * gram[c * BLOCK + i];
      t[r * BLOCK + i] = -ti * s;
    }
  }
}

/** Rows per chunk in the block update, so that the chunk of V stays in cache while the columns stream by. */
const ROW_CHUNK = 1024;

/**
 * target[k0:, from:to] ← (I − V T V')ᵀ target (transpose = true, applying Q' in the factorization)
 * or (I − V T V') target (transpose = false, forming Q). Rows are taken in chunks and two target
 * columns share each pass over a chunk of V. The loops over rows are small functions of their
 * own, which the JavaScript engine optimizes once and keeps.
 */
function applyBlock(
  vbuf: Float64Array,
  n: number,
  k0: number,
  t: Float64Array,
  transpose: boolean,
  target: Float64Array,
  from: number,
  to: number,
): void {
  const count = to - from;
  if (count <= 0) return;
  const w = new Float64Array(4 * count);
  const u = new Float64Array(4 * count);
  const m = new Float64Array(16);
  // W = V' target (4 per column)
  for (let r0 = k0; r0 < n; r0 += ROW_CHUNK)
    blockProducts(vbuf, k0, target, n, from, count, r0, Math.min(n, r0 + ROW_CHUNK), w);
  // U = M W with M = Tᵀ or T
  for (let r = 0; r < 4; r++)
    for (let c = 0; c < 4; c++) m[r * 4 + c] = transpose ? t[c * 4 + r] : t[r * 4 + c];
  for (let c = 0; c < count; c++) {
    const o = c * 4;
    for (let r = 0; r < 4; r++) {
      u[o + r] =
        m[r * 4] * w[o] + m[r * 4 + 1] * w[o + 1] + m[r * 4 + 2] * w[o + 2] + m[r * 4 + 3] * w[o + 3];
    }
  }
  // target −= V U
  for (let r0 = k0; r0 < n; r0 += ROW_CHUNK)
    blockUpdate(vbuf, k0, target, n, from, count, r0, Math.min(n, r0 + ROW_CHUNK), u);
}

/** W[:, c] += V' target[r0:r1, from + c] over one chunk of rows, two target columns at a time. */
function blockProducts(
  vbuf: Float64Array,
  k0: number,
  target: Float64Array,
  n: number,
  from: number,
  count: number,
  r0: number,
  r1: number,
  w: Float64Array,
): void {
  for (let c = 0; c < count; c += 2) {
    const two = c + 1 < count;
    const a = (from + c) * n;
    const b = two ? a + n : a;
    let a0 = 0,
      a1 = 0,
      a2 = 0,
      a3 = 0,
      b0 = 0,
      b1 = 0,
      b2 = 0,
      b3 = 0;
    for (let i = r0, r = (r0 - k0) * 4; i < r1; i++, r += 4) {
      const v0 = vbuf[r],
        v1 = vbuf[r + 1],
        v2 = vbuf[r + 2],
        v3 = vbuf[r + 3];
      const xa = target[a + i];
      const xb = target[b + i];
      a0 += v0 * xa;
      a1 += v1 * xa;
      a2 += v2 * xa;
      a3 += v3 * xa;
      b0 += v0 * xb;
      b1 += v1 * xb;
      b2 += v2 * xb;
      b3 += v3 * xb;
    }
    const o = c * 4;
    w[o] += a0;
    w[o + 1] += a1;
    w[o + 2] += a2;
    w[o + 3] += a3;
    if (two) {
      w[o + 4] += b0;
      w[o + 5] += b1;
      w[o + 6] += b2;
      w[o + 7] += b3;
    }
  }
}

/** target[r0:r1, from + c] −= V U[:, c] over one chunk of rows, two target columns at a time. */
function blockUpdate(
  vbuf: Float64Array,
  k0: number,
  target: Float64Array,
  n: number,
  from: number,
  count: number,
  r0: number,
  r1: number,
  u: Float64Array,
): void {
  for (let c = 0; c < count; c += 2) {
    const o = c * 4;
    const a = (from + c) * n;
    const ua0 = u[o],
      ua1 = u[o + 1],
      ua2 = u[o + 2],
      ua3 = u[o + 3];
    if (c + 1 < count) {
      const b = a + n;
      const ub0 = u[o + 4],
        ub1 = u[o + 5],
        ub2 = u[o + 6],
        ub3 = u[o + 7];
      for (let i = r0, r = (r0 - k0) * 4; i < r1; i++, r += 4) {
        const v0 = vbuf[r],
          v1 = vbuf[r + 1],
          v2 = vbuf[r + 2],
          v3 = vbuf[r + 3];
        target[a + i] -= v0 * ua0 + v1 * ua1 + v2 * ua2 + v3 * ua3;
        target[b + i] -= v0 * ub0 + v1 * ub1 + v2 * ub2 + v3 * ub3;
      }
    } else {
      for (let i = r0, r = (r0 - k0) * 4; i < r1; i++, r += 4) {
        target[a + i] -= vbuf[r] * ua0 + vbuf[r + 1] * ua1 + vbuf[r + 2] * ua2 + vbuf[r + 3] * ua3;
      }
    }
  }
}

export function columnNorm(w: Float64Array, n: number, offset: number, from: number): number {
  let ss = 0;
  for (let i = from; i < n; i++) {
    const v = w[offset + i];
    ss += v * v;
  }
  if (ss > 1e-280 && ss < 1e280) return Math.sqrt(ss);
  // scaled sum of squares (as in LAPACK dnrm2) when the plain sum could overflow or underflow
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
 * Forms the thin Q (n×rank, column-major) by backward accumulation, a block of reflectors at a
 * time (LAPACK dorgqr). With `inPlace` the factorization's storage is reused (the factorization is
 * no longer usable afterwards; take R first).
 */
export function formThinQ(f: HouseholderQR, inPlace = false): Float64Array {
  const { n, rank } = f;
  const a = inPlace ? f.qr : new Float64Array(f.qr);
  const vbuf = new Float64Array(n * BLOCK);
  const tmat = new Float64Array(BLOCK * BLOCK);
  const blocks = Math.ceil(rank / BLOCK);
  for (let blk = blocks - 1; blk >= 0; blk--) {
    const k0 = blk * BLOCK;
    const k1 = Math.min(rank, k0 + BLOCK);
    loadBlock(a, n, k0, k1, vbuf);
    blockTriangle(vbuf, n, k0, f.tau, k0, k1, tmat);
    // later columns hold Q's columns in rows ≥ k1 (rows above are zero)
    if (k1 < rank) applyBlock(vbuf, n, k0, tmat, false, a, k1, rank);
    // this block's own columns: (I − V T V') e_c = e_c − V (T V[c, :]')
    for (let c = k0; c < k1; c++) {
      const r = (c - k0) * BLOCK;
      const u = [0, 0, 0, 0];
      for (let i = 0; i < BLOCK; i++) {
        let s = 0;
        for (let q = i; q < BLOCK; q++) s += tmat[i * BLOCK + q] * vbuf[r + q];
        u[i] = s;
      }
      const col = c * n;
      a.fill(0, col, col + k0);
      ownColumn(vbuf, a, col + k0, col + n, u[0], u[1], u[2], u[3]);
      a[col + c] += 1;
    }
  }
  return a;
}

/** x[from:to] *= s. */
function scaleRange(x: Float64Array, from: number, to: number, s: number): void {
  for (let i = from; i < to; i++) x[i] *= s;
}

/** a[from + r] = −(V[r, :] · u) for the rows of V (BLOCK per row) from the block's first row. */
function ownColumn(
  vbuf: Float64Array,
  a: Float64Array,
  from: number,
  to: number,
  u0: number,
  u1: number,
  u2: number,
  u3: number,
): void {
  for (let i = from, rr = 0; i < to; i++, rr += BLOCK) {
    a[i] = -(vbuf[rr] * u0 + vbuf[rr + 1] * u1 + vbuf[rr + 2] * u2 + vbuf[rr + 3] * u3);
  }
}

/** Q'v for the thin Q (n×r, column-major): r dot products, four columns per pass. */
export function thinQtVector(q: Float64Array, n: number, r: number, v: Float64Array): Float64Array {
  const out = new Float64Array(r);
  let k = 0;
  for (; k + 3 < r; k += 4) {
    const o0 = k * n,
      o1 = o0 + n,
      o2 = o1 + n,
      o3 = o2 + n;
    let s0 = 0,
      s1 = 0,
      s2 = 0,
      s3 = 0;
    for (let i = 0; i < n; i++) {
      const vi = v[i];
      s0 += q[o0 + i] * vi;
      s1 += q[o1 + i] * vi;
      s2 += q[o2 + i] * vi;
      s3 += q[o3 + i] * vi;
    }
    out[k] = s0;
    out[k + 1] = s1;
    out[k + 2] = s2;
    out[k + 3] = s3;
  }
  for (; k < r; k++) {
    const o = k * n;
    let s = 0;
    for (let i = 0; i < n; i++) s += q[o + i] * v[i];
    out[k] = s;
  }
  return out;
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
