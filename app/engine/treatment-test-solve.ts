/** Solves S x = b for a small symmetric positive definite S (row-major q×q) by Cholesky; null when S is not positive definite. */
export function choleskySolveSymmetric(s: Float64Array, q: number, b: Float64Array): Float64Array | null {
  const l = new Float64Array(q * q);
  for (let i = 0; i < q; i++) {
    for (let j = 0; j <= i; j++) {
      let sum = s[i * q + j];
      for (let k = 0; k < j; k++) sum -= l[i * q + k] * l[j * q + k];
      if (i === j) {
        if (!(sum > 0)) return null;
        l[i * q + i] = Math.sqrt(sum);
      } else l[i * q + j] = sum / l[j * q + j];
    }
  }
  const y = new Float64Array(q);
  for (let i = 0; i < q; i++) {
    let sum = b[i];
    for (let k = 0; k < i; k++) sum -= l[i * q + k] * y[k];
    y[i] = sum / l[i * q + i];
  }
  const x = new Float64Array(q);
  for (let i = q - 1; i >= 0; i--) {
    let sum = y[i];
    for (let k = i + 1; k < q; k++) sum -= l[k * q + i] * x[k];
    x[i] = sum / l[i * q + i];
  }
  return x;
}
