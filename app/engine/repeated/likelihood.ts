/**
 * The (restricted) log-likelihood of y = Xβ + ε, ε ~ N(0, V), V block-diagonal with one block
 * per subject: the rows and columns of the visits' covariance Σ at that subject's observed
 * visits. β is profiled out by generalized least squares, so the likelihood is a function of Σ:
 *
 *   REML: ℓ = −½[(N − p) log 2π + Σᵢ log|Vᵢ| + log|X'V⁻¹X| + r'V⁻¹r]
 *   ML:   ℓ = −½[N log 2π + Σᵢ log|Vᵢ| + r'V⁻¹r]
 *
 * with r = y − Xβ̂. This is the value R's nlme reports for gls (its REML has no ½log|X'X| term).
 * The gradient with respect to the entries of Σ is −½ Σᵢ embed(Pᵢᵢ − V⁻¹rᵢrᵢ'V⁻¹), with
 * Pᵢᵢ = Vᵢ⁻¹ − Vᵢ⁻¹Xᵢ(X'V⁻¹X)⁻¹Xᵢ'Vᵢ⁻¹ for REML and Vᵢ⁻¹ for ML (Harville 1977, JASA 72,
 * 320–338); the chain rule through dΣ/dθ gives the gradient in any structure's parameters.
 */
import { cholesky, choleskyInverse } from "../survival/symmetric";
import type { RepeatedMethod } from "./repeated-spec";

/** The fixed parts of the problem: design, response and each subject's rows and visit positions. */
export interface LikelihoodProblem {
  readonly t: number;
  readonly n: number;
  readonly p: number;
  /** Column-major n×p design. */
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly subjects: readonly { readonly rows: Int32Array; readonly positions: Int32Array }[];
  readonly method: RepeatedMethod;
}

/** One subject pattern's covariance: the lower Cholesky factor and inverse of Σ at those visits. */
export interface PatternFactor {
  readonly m: number;
  readonly l: Float64Array;
  readonly inverse: Float64Array;
  readonly logDet: number;
}

export interface LikelihoodValue {
  readonly logLik: number;
  readonly beta: Float64Array;
  /** (X'V⁻¹X)⁻¹, row-major p×p: the model-based covariance of β̂. */
  readonly betaCovariance: Float64Array;
  /** ∂ℓ/∂Σ_ab (row-major t×t, each entry of Σ treated as its own argument). */
  readonly gradientSigma: Float64Array | null;
  /** Each subject's covariance factor (shared by subjects with the same visits). */
  readonly factors: readonly PatternFactor[];
}

/** Thrown when Σ at some subject's visits is not positive definite or X'V⁻¹X is singular. */
export class NotPositiveDefinite extends Error {}

const LOG_2PI = Math.log(2 * Math.PI);

function patternFactor(sigma: Float64Array, t: number, positions: Int32Array): PatternFactor {
  const m = positions.length;
  const v = new Float64Array(m * m);
  for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) v[a * m + b] = sigma[positions[a] * t + positions[b]];
  const f = cholesky(v, m, 1e-13);
  if (!("l" in f)) throw new NotPositiveDefinite("the visits' covariance is not positive definite");
  let logDet = 0;
  for (let a = 0; a < m; a++) logDet += 2 * Math.log(f.l[a * m + a]);
  return { m, l: f.l, inverse: choleskyInverse(f.l, m), logDet };
}

/** Covariance factors per subject, one computation per distinct set of visits. */
export function subjectFactors(problem: LikelihoodProblem, sigma: Float64Array): PatternFactor[] {
  const cache = new Map<string, PatternFactor>();
  return problem.subjects.map((s) => {
    const key = s.positions.join(",");
    let f = cache.get(key);
    if (!f) {
      f = patternFactor(sigma, problem.t, s.positions);
      cache.set(key, f);
    }
    return f;
  });
}

/** Vᵢ⁻¹Xᵢ (m×p, row-major) for one subject. */
export function whitenedDesign(problem: LikelihoodProblem, rows: Int32Array, f: PatternFactor): Float64Array {
  const { n, p, x } = problem;
  const m = f.m;
  const u = new Float64Array(m * p);
  for (let a = 0; a < m; a++) {
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let b = 0; b < m; b++) s += f.inverse[a * m + b] * x[j * n + rows[b]];
      u[a * p + j] = s;
    }
  }
  return u;
}

/** ℓ at Σ, with β̂, its covariance and (when asked) the gradient with respect to Σ. */
export function evaluateLikelihood(problem: LikelihoodProblem, sigma: Float64Array, withGradient: boolean): LikelihoodValue {
  const { t, n, p, x, y, subjects, method } = problem;
  const factors = subjectFactors(problem, sigma);
  const a = new Float64Array(p * p);
  const b = new Float64Array(p);
  let logDetV = 0;
  const us: Float64Array[] = [];
  subjects.forEach((s, i) => {
    const f = factors[i];
    const u = whitenedDesign(problem, s.rows, f);
    us.push(u);
    logDetV += f.logDet;
    const m = f.m;
    for (let c = 0; c < m; c++) {
      const row = s.rows[c];
      const yc = y[row];
      for (let j = 0; j < p; j++) {
        const xj = x[j * n + row];
        const ucj = u[c * p + j];
        b[j] += ucj * yc;
        if (xj === 0) continue;
        for (let k = 0; k <= j; k++) a[j * p + k] += xj * u[c * p + k];
      }
    }
  });
  for (let j = 0; j < p; j++) for (let k = 0; k < j; k++) a[k * p + j] = a[j * p + k];
  const fa = cholesky(a, p, 1e-11);
  if (!("l" in fa)) throw new NotPositiveDefinite("X'V⁻¹X is singular: the design is not of full rank");
  const betaCovariance = choleskyInverse(fa.l, p);
  const beta = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    let s = 0;
    for (let k = 0; k < p; k++) s += betaCovariance[j * p + k] * b[k];
    beta[j] = s;
  }
  let logDetA = 0;
  for (let j = 0; j < p; j++) logDetA += 2 * Math.log(fa.l[j * p + j]);

  const gradient = withGradient ? new Float64Array(t * t) : null;
  let quadratic = 0;
  const cu = new Float64Array(p);
  subjects.forEach((s, i) => {
    const f = factors[i];
    const m = f.m;
    const r = new Float64Array(m);
    for (let c = 0; c < m; c++) {
      let fit = 0;
      for (let j = 0; j < p; j++) fit += x[j * n + s.rows[c]] * beta[j];
      r[c] = y[s.rows[c]] - fit;
    }
    const w = new Float64Array(m);
    for (let c = 0; c < m; c++) {
      let v = 0;
      for (let d = 0; d < m; d++) v += f.inverse[c * m + d] * r[d];
      w[c] = v;
      quadratic += r[c] * v;
    }
    if (!gradient) return;
    const u = us[i];
    for (let c = 0; c < m; c++) {
      // cu = (X'V⁻¹X)⁻¹ uᶜ (row c of Vᵢ⁻¹Xᵢ)
      if (method === "reml") {
        for (let j = 0; j < p; j++) {
          let v = 0;
          for (let k = 0; k < p; k++) v += betaCovariance[j * p + k] * u[c * p + k];
          cu[j] = v;
        }
      }
      for (let d = 0; d <= c; d++) {
        let pcd = f.inverse[c * m + d] - w[c] * w[d];
        if (method === "reml") {
          let v = 0;
          for (let j = 0; j < p; j++) v += cu[j] * u[d * p + j];
          pcd -= v;
        }
        const pa = s.positions[c];
        const pb = s.positions[d];
        gradient[pa * t + pb] += -0.5 * pcd;
        if (c !== d) gradient[pb * t + pa] += -0.5 * pcd;
      }
    }
  });
  const nEff = method === "reml" ? problem.n - p : problem.n;
  const logLik = -0.5 * (nEff * LOG_2PI + logDetV + (method === "reml" ? logDetA : 0) + quadratic);
  return { logLik, beta, betaCovariance, gradientSigma: gradient, factors };
}
