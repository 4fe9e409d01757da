/**
 * Covariance structures of the visits within a subject, each as a map from unconstrained
 * parameters θ to the T×T covariance Σ (row-major), so that any θ gives a positive-definite Σ:
 * - unstructured: Σ = LL' with L lower triangular, log of its diagonal (row by row);
 * - compound symmetry: log σ² (or one per visit) and ρ = (eᶻ − 1)/(eᶻ + T − 1) ∈ (−1/(T−1), 1);
 * - AR(1): log σ² (or one per visit) and ρ = tanh z, correlation ρ^|i−j| over visit positions;
 * - Toeplitz: log σ² (or one per visit) and T − 1 partial autocorrelations tanh zₖ, turned into
 *   the lag correlations by the Durbin–Levinson recursion (every positive-definite Toeplitz
 *   correlation matrix has one such set, so this is the general banded-by-lag structure).
 * Parameter counts match nlme's (correlation parameters + variance ratios + σ), which enter AIC.
 */
import type { CovarianceStructureName } from "./repeated-spec";

export interface CovarianceStructure {
  readonly name: CovarianceStructureName;
  parameterCount(t: number): number;
  /** Σ(θ), row-major t×t. */
  sigma(theta: Float64Array, t: number): Float64Array;
  /** Starting θ from a rough positive-definite covariance of the visits. */
  start(sigma0: Float64Array, t: number): Float64Array;
}

const clamp = (x: number, lo: number, hi: number) => Math.min(hi, Math.max(lo, x));

function meanCorrelation(s: Float64Array, t: number, lag: number | null): number {
  let sum = 0;
  let count = 0;
  for (let a = 0; a < t; a++) {
    for (let b = a + 1; b < t; b++) {
      if (lag !== null && b - a !== lag) continue;
      sum += s[a * t + b] / Math.sqrt(s[a * t + a] * s[b * t + b]);
      count++;
    }
  }
  return count > 0 ? sum / count : 0;
}

function logVariances(s: Float64Array, t: number, heterogeneous: boolean): number[] {
  const logs = Array.from({ length: t }, (_, a) => Math.log(s[a * t + a]));
  if (heterogeneous) return logs;
  return [Math.log(logs.reduce((acc, l) => acc + Math.exp(l), 0) / t)];
}

/** Σ from standard deviations per visit and a correlation function of two positions. */
function scaled(
  theta: Float64Array,
  t: number,
  heterogeneous: boolean,
  corr: (a: number, b: number) => number,
): Float64Array {
  const sd = Array.from({ length: t }, (_, a) => Math.exp(0.5 * theta[heterogeneous ? a : 0]));
  const s = new Float64Array(t * t);
  for (let a = 0; a < t; a++)
    for (let b = 0; b < t; b++) s[a * t + b] = sd[a] * sd[b] * (a === b ? 1 : corr(a, b));
  return s;
}

const unstructured: CovarianceStructure = {
  name: "unstructured",
  parameterCount: (t) => (t * (t + 1)) / 2,
  sigma(theta, t) {
    const l = new Float64Array(t * t);
    let k = 0;
    for (let i = 0; i < t; i++)
      for (let j = 0; j <= i; j++) l[i * t + j] = i === j ? Math.exp(theta[k++]) : theta[k++];
    const s = new Float64Array(t * t);
    for (let i = 0; i < t; i++) {
      for (let j = 0; j <= i; j++) {
        let v = 0;
        for (let m = 0; m <= j; m++) v += l[i * t + m] * l[j * t + m];
        s[i * t + j] = v;
        s[j * t + i] = v;
      }
    }
    return s;
  },
  start(s0, t) {
    // Cholesky of the starting covariance (positive definite by construction of the caller)
    const l = new Float64Array(t * t);
    for (let j = 0; j < t; j++) {
      let d = s0[j * t + j];
      for (let m = 0; m < j; m++) d -= l[j * t + m] ** 2;
      l[j * t + j] = Math.sqrt(Math.max(d, 1e-8 * s0[j * t + j]));
      for (let i = j + 1; i < t; i++) {
        let v = s0[i * t + j];
        for (let m = 0; m < j; m++) v -= l[i * t + m] * l[j * t + m];
        l[i * t + j] = v / l[j * t + j];
      }
    }
    const theta: number[] = [];
    for (let i = 0; i < t; i++)
      for (let j = 0; j <= i; j++) theta.push(i === j ? Math.log(l[i * t + j]) : l[i * t + j]);
    return Float64Array.from(theta);
  },
};

function compoundSymmetry(heterogeneous: boolean): CovarianceStructure {
  const v = heterogeneous ? (t: number) => t : () => 1;
  return {
    name: heterogeneous ? "compound-symmetry-heterogeneous" : "compound-symmetry",
    parameterCount: (t) => v(t) + 1,
    sigma(theta, t) {
      const z = theta[v(t)];
      const rho = t > 1 ? Math.expm1(z) / (Math.exp(z) + t - 1) : 0;
      return scaled(theta, t, heterogeneous, () => rho);
    },
    start(s0, t) {
      const rho = clamp(meanCorrelation(s0, t, null), -0.5 / Math.max(1, t - 1), 0.9);
      return Float64Array.from([
        ...logVariances(s0, t, heterogeneous),
        Math.log((1 + (t - 1) * rho) / (1 - rho)),
      ]);
    },
  };
}

function ar1(heterogeneous: boolean): CovarianceStructure {
  const v = heterogeneous ? (t: number) => t : () => 1;
  return {
    name: heterogeneous ? "ar1-heterogeneous" : "ar1",
    parameterCount: (t) => v(t) + 1,
    sigma(theta, t) {
      const rho = Math.tanh(theta[v(t)]);
      return scaled(theta, t, heterogeneous, (a, b) => rho ** Math.abs(a - b));
    },
    start(s0, t) {
      return Float64Array.from([
        ...logVariances(s0, t, heterogeneous),
        Math.atanh(clamp(meanCorrelation(s0, t, 1), -0.9, 0.9)),
      ]);
    },
  };
}

/** Lag correlations ρ₀ = 1, ρ₁ … ρ_{t−1} from partial autocorrelations (Durbin–Levinson). */
export function lagCorrelations(pacf: ArrayLike<number>, t: number): Float64Array {
  const rho = new Float64Array(t);
  rho[0] = 1;
  let phi: number[] = [];
  for (let k = 1; k < t; k++) {
    const pk = pacf[k - 1];
    let num = 0;
    let den = 1;
    for (let j = 1; j < k; j++) {
      num += phi[j - 1] * rho[k - j];
      den -= phi[j - 1] * rho[j];
    }
    rho[k] = num + pk * den;
    const next = phi.map((f, j) => f - pk * phi[k - 2 - j]);
    next.push(pk);
    phi = next;
  }
  return rho;
}

function toeplitz(heterogeneous: boolean): CovarianceStructure {
  const v = heterogeneous ? (t: number) => t : () => 1;
  return {
    name: heterogeneous ? "toeplitz-heterogeneous" : "toeplitz",
    parameterCount: (t) => v(t) + t - 1,
    sigma(theta, t) {
      const pacf = Array.from({ length: t - 1 }, (_, k) => Math.tanh(theta[v(t) + k]));
      const rho = lagCorrelations(pacf, t);
      return scaled(theta, t, heterogeneous, (a, b) => rho[Math.abs(a - b)]);
    },
    start(s0, t) {
      const first = Math.atanh(clamp(meanCorrelation(s0, t, 1), -0.9, 0.9));
      return Float64Array.from([
        ...logVariances(s0, t, heterogeneous),
        ...Array.from({ length: t - 1 }, (_, k) => (k === 0 ? first : 0)),
      ]);
    },
  };
}

export const STRUCTURES: Readonly<Record<CovarianceStructureName, CovarianceStructure>> = {
  unstructured,
  toeplitz: toeplitz(false),
  "toeplitz-heterogeneous": toeplitz(true),
  ar1: ar1(false),
  "ar1-heterogeneous": ar1(true),
  "compound-symmetry": compoundSymmetry(false),
  "compound-symmetry-heterogeneous": compoundSymmetry(true),
};

/** dΣ/dθₖ for every k, by central differences of the (cheap, smooth) map θ → Σ. */
export function sigmaDerivatives(
  structure: CovarianceStructure,
  theta: Float64Array,
  t: number,
): Float64Array[] {
  return Array.from(theta, (value, k) => {
    const h = 1e-6 * Math.max(1, Math.abs(value));
    const up = Float64Array.from(theta);
    const down = Float64Array.from(theta);
    up[k] = value + h;
    down[k] = value - h;
    const su = structure.sigma(up, t);
    const sd = structure.sigma(down, t);
    return su.map((x, i) => (x - sd[i]) / (2 * h));
  });
}
