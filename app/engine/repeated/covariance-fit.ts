/**
 * Fits one covariance structure: starting values from the ordinary least-squares residuals
 * (their covariance over the pairs of visits both observed), then damped Newton on the structure's
 * unconstrained parameters, the gradient from the likelihood's derivative in Σ.
 */
import { cholesky } from "../survival/symmetric";
import { STRUCTURES, sigmaDerivatives, type CovarianceStructure } from "./covariance-structures";
import { maximizeByNewton } from "./damped-newton";
import { evaluateLikelihood, type LikelihoodProblem, type LikelihoodValue } from "./likelihood";
import type { CovarianceStructureName } from "./repeated-spec";

export interface CovarianceFit {
  readonly structure: CovarianceStructureName;
  readonly theta: Float64Array;
  /** Σ at the estimate, row-major t×t. */
  readonly sigma: Float64Array;
  readonly likelihood: LikelihoodValue;
  /** Hessian of ℓ in θ at the estimate (observed information is its negative). */
  readonly hessian: Float64Array;
  readonly parameterCount: number;
  readonly iterations: number;
  readonly converged: boolean;
  readonly reason: string | null;
}

/** Covariance of the visits from ordinary least-squares residuals, made positive definite. */
export function startingCovariance(problem: LikelihoodProblem): Float64Array {
  const { t, n, p, x, y } = problem;
  const xtx = new Float64Array(p * p);
  const xty = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    for (let i = 0; i < n; i++) xty[j] += x[j * n + i] * y[i];
    for (let k = 0; k <= j; k++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += x[j * n + i] * x[k * n + i];
      xtx[j * p + k] = s;
      xtx[k * p + j] = s;
    }
  }
  const f = cholesky(xtx, p, 1e-11);
  const r = Float64Array.from(y);
  if ("l" in f) {
    const l = f.l;
    const z = Float64Array.from(xty);
    for (let i = 0; i < p; i++) {
      for (let k = 0; k < i; k++) z[i] -= l[i * p + k] * z[k];
      z[i] /= l[i * p + i];
    }
    for (let i = p - 1; i >= 0; i--) {
      for (let k = i + 1; k < p; k++) z[i] -= l[k * p + i] * z[k];
      z[i] /= l[i * p + i];
    }
    for (let i = 0; i < n; i++) for (let j = 0; j < p; j++) r[i] -= x[j * n + i] * z[j];
  }
  const sum = new Float64Array(t * t);
  const count = new Float64Array(t * t);
  for (const s of problem.subjects) {
    for (let a = 0; a < s.rows.length; a++) {
      for (let b = 0; b < s.rows.length; b++) {
        sum[s.positions[a] * t + s.positions[b]] += r[s.rows[a]] * r[s.rows[b]];
        count[s.positions[a] * t + s.positions[b]]++;
      }
    }
  }
  let pooled = 0;
  for (let i = 0; i < n; i++) pooled += r[i] * r[i];
  pooled = Math.max(pooled / Math.max(1, n - p), 1e-12);
  const s0 = new Float64Array(t * t);
  for (let a = 0; a < t; a++)
    s0[a * t + a] =
      count[a * t + a] > 1 ? Math.max(sum[a * t + a] / count[a * t + a], 1e-3 * pooled) : pooled;
  for (let a = 0; a < t; a++) {
    for (let b = 0; b < t; b++) {
      if (a === b) continue;
      const c = count[a * t + b] > 2 ? sum[a * t + b] / count[a * t + b] : 0;
      s0[a * t + b] =
        Math.max(-0.9, Math.min(0.9, c / Math.sqrt(s0[a * t + a] * s0[b * t + b]))) *
        Math.sqrt(s0[a * t + a] * s0[b * t + b]);
    }
  }
  if ("l" in cholesky(s0, t, 1e-10)) return s0;
  const diagonal = new Float64Array(t * t);
  for (let a = 0; a < t; a++) diagonal[a * t + a] = s0[a * t + a];
  return diagonal;
}

/** ℓ and its gradient in θ for a structure. */
export function structureObjective(problem: LikelihoodProblem, structure: CovarianceStructure) {
  const t = problem.t;
  return {
    evaluate(theta: Float64Array) {
      const sigma = structure.sigma(theta, t);
      const value = evaluateLikelihood(problem, sigma, true);
      const g = value.gradientSigma as Float64Array;
      const gradient = Float64Array.from(sigmaDerivatives(structure, theta, t), (ds) => {
        let s = 0;
        for (let i = 0; i < ds.length; i++) s += ds[i] * g[i];
        return s;
      });
      return { value: value.logLik, gradient };
    },
  };
}

/** Fits a structure; throws when no step from the start is possible (the caller tries the next one). */
export function fitCovariance(
  problem: LikelihoodProblem,
  name: CovarianceStructureName,
  sigma0: Float64Array,
): CovarianceFit {
  const structure = STRUCTURES[name];
  const t = problem.t;
  const objective = structureObjective(problem, structure);
  const outcome = maximizeByNewton(objective, structure.start(sigma0, t));
  const sigma = structure.sigma(outcome.theta, t);
  return {
    structure: name,
    theta: outcome.theta,
    sigma,
    likelihood: evaluateLikelihood(problem, sigma, false),
    hessian: outcome.hessian,
    parameterCount: structure.parameterCount(t),
    iterations: outcome.iterations,
    converged: outcome.converged,
    reason: outcome.reason,
  };
}
