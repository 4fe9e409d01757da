/**
 * Small dense symmetric positive-definite algebra for the Cox fit (p is the number of
 * coefficients, a few dozen at most): Cholesky factor, solve and inverse, row-major p×p.
 */

/** Cholesky factor L (lower, row-major) of A, or the index of the first column whose pivot is not positive. */
export function cholesky(
  a: Float64Array,
  p: number,
  tolerance = 1e-12,
): { l: Float64Array } | { failedColumn: number } {
  const l = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    let s = a[j * p + j];
    for (let k = 0; k < j; k++) s -= l[j * p + k] * l[j * p + k];
    if (!(s > tolerance * Math.max(Math.abs(a[j * p + j]), Number.MIN_VALUE))) return { failedColumn: j };
    const d = Math.sqrt(s);
    l[j * p + j] = d;
    for (let i = j + 1; i < p; i++) {
      let t = a[i * p + j];
      for (let k = 0; k < j; k++) t -= l[i * p + k] * l[j * p + k];
      l[i * p + j] = t / d;
    }
  }
  return { l };
}

/** Solves L L' z = b for the Cholesky factor L. */
export function choleskySolve(l: Float64Array, p: number, b: ArrayLike<number>): Float64Array {
  const z = Float64Array.from(b);
  for (let i = 0; i < p; i++) {
    let s = z[i];
    for (let k = 0; k < i; k++) s -= l[i * p + k] * z[k];
    z[i] = s / l[i * p + i];
  }
  for (let i = p - 1; i >= 0; i--) {
    let s = z[i];
    for (let k = i + 1; k < p; k++) s -= l[k * p + i] * z[k];
    z[i] = s / l[i * p + i];
  }
  return z;
}

/** Inverse of A from its Cholesky factor. */
export function choleskyInverse(l: Float64Array, p: number): Float64Array {
  const inv = new Float64Array(p * p);
  const e = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    e.fill(0);
    e[j] = 1;
    const col = choleskySolve(l, p, e);
    for (let i = 0; i < p; i++) inv[i * p + j] = col[i];
  }
  return inv;
}

/** Quadratic form b' A⁻¹ b for symmetric positive-definite A; NaN when A is not positive definite. */
export function inverseQuadraticForm(a: Float64Array, p: number, b: ArrayLike<number>): number {
  if (p === 0) return 0;
  const f = cholesky(a, p);
  if (!("l" in f)) return NaN;
  const z = choleskySolve(f.l, p, b);
  let s = 0;
  for (let i = 0; i < p; i++) s += b[i] * z[i];
  return s;
}

/** Sub-matrix of a row-major p×p matrix on the given indices. */
export function subMatrix(a: Float64Array, p: number, idx: readonly number[]): Float64Array {
  const m = idx.length;
  const out = new Float64Array(m * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) out[i * m + j] = a[idx[i] * p + idx[j]];
  return out;
}
