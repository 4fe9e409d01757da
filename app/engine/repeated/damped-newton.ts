/**
 * Maximizes a smooth function by damped Newton steps: the Hessian by central differences of the
 * analytic gradient, a Levenberg ridge added while the negative Hessian is not positive definite,
 * and step-halving until the function does not fall.
 *
 * Written here because no maintained optimizer on the package list fits: `fmin` offers
 * Nelder–Mead and conjugate gradients only, `numeric`'s quasi-Newton `uncmin` is unmaintained
 * since 2012 and stops on a relative gradient test too loose for agreement with nlme to 1e-5.
 * Newton's quadratic convergence reaches a gradient near rounding in a few steps from the
 * moment-based start, and the Hessian it needs is the observed information used afterwards.
 */
import { cholesky, choleskySolve } from "../survival/symmetric";

export interface Objective {
  /** Value and gradient at θ; throws when θ is outside the domain (the step is then halved). */
  evaluate(theta: Float64Array): { value: number; gradient: Float64Array };
}

export interface NewtonOutcome {
  readonly theta: Float64Array;
  readonly value: number;
  readonly gradient: Float64Array;
  /** Hessian of the function at θ (row-major), by central differences of the gradient. */
  readonly hessian: Float64Array;
  readonly iterations: number;
  readonly converged: boolean;
  /** Why it stopped without converging. */
  readonly reason: string | null;
}

/** Hessian by central differences of the gradient, symmetrized. */
export function numericHessian(objective: Objective, theta: Float64Array): Float64Array {
  const k = theta.length;
  const h = new Float64Array(k * k);
  for (let j = 0; j < k; j++) {
    const step = 1e-4 * Math.max(1, Math.abs(theta[j]));
    const up = Float64Array.from(theta);
    const down = Float64Array.from(theta);
    up[j] += step;
    down[j] -= step;
    const gu = objective.evaluate(up).gradient;
    const gd = objective.evaluate(down).gradient;
    for (let i = 0; i < k; i++) h[i * k + j] = (gu[i] - gd[i]) / (2 * step);
  }
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < i; j++) {
      const v = 0.5 * (h[i * k + j] + h[j * k + i]);
      h[i * k + j] = v;
      h[j * k + i] = v;
    }
  }
  return h;
}

function tryEvaluate(
  objective: Objective,
  theta: Float64Array,
): { value: number; gradient: Float64Array } | null {
  try {
    const out = objective.evaluate(theta);
    return Number.isFinite(out.value) ? out : null;
  } catch {
    return null;
  }
}

/** Newton direction d solving (−H + λI) d = g, with λ raised until −H + λI is positive definite. */
function direction(
  hessian: Float64Array,
  gradient: Float64Array,
  lambda: number,
): { d: Float64Array; lambda: number } {
  const k = gradient.length;
  let scale = 0;
  for (let i = 0; i < k; i++) scale = Math.max(scale, Math.abs(hessian[i * k + i]));
  let lam = lambda;
  for (let attempt = 0; attempt < 60; attempt++) {
    const m = new Float64Array(k * k);
    for (let i = 0; i < k * k; i++) m[i] = -hessian[i];
    for (let i = 0; i < k; i++) m[i * k + i] += lam;
    const f = cholesky(m, k, 1e-14);
    if ("l" in f) return { d: choleskySolve(f.l, k, gradient), lambda: lam };
    lam = lam === 0 ? 1e-8 * Math.max(1, scale) : lam * 10;
  }
  return { d: Float64Array.from(gradient), lambda: lam };
}

export function maximizeByNewton(
  objective: Objective,
  start: Float64Array,
  maxIterations = 200,
): NewtonOutcome {
  let theta = Float64Array.from(start);
  const first = tryEvaluate(objective, theta);
  if (!first) throw new Error("the starting values are outside the domain");
  let current = first;
  const k = theta.length;
  const history: number[] = [];
  for (let iteration = 1; iteration <= maxIterations; iteration++) {
    history.push(current.value);
    // ten steps that together gain nothing: a direction the data do not inform
    if (
      history.length > 10 &&
      current.value - history[history.length - 11] <= 1e-10 * Math.max(1, Math.abs(current.value))
    ) {
      return {
        theta,
        value: current.value,
        gradient: current.gradient,
        hessian: numericHessian(objective, theta),
        iterations: iteration - 1,
        converged: false,
        reason:
          "the likelihood stopped rising without converging (some covariance parameter is not estimable)",
      };
    }
    const hessian = numericHessian(objective, theta);
    let lambda = 0;
    let accepted = false;
    for (let ridge = 0; ridge < 8 && !accepted; ridge++) {
      const dir = direction(hessian, current.gradient, lambda);
      lambda = dir.lambda;
      let d = dir.d;
      let decrement = 0;
      for (let i = 0; i < k; i++) decrement += d[i] * current.gradient[i];
      if (decrement < 1e-9 * Math.max(1, Math.abs(current.value)) && lambda === 0) {
        // within the quadratic region: one last full step, then the Hessian at the final point
        const last = theta.map((v, i) => v + d[i]);
        const trial = tryEvaluate(objective, last);
        if (trial && trial.value >= current.value - 1e-9 * Math.max(1, Math.abs(current.value))) {
          theta = last;
          current = trial;
        }
        const final = numericHessian(objective, theta);
        return {
          theta,
          value: current.value,
          gradient: current.gradient,
          hessian: final,
          iterations: iteration,
          converged: true,
          reason: null,
        };
      }
      let big = 0;
      for (let i = 0; i < k; i++) big = Math.max(big, Math.abs(d[i]));
      if (big > 5) d = d.map((v) => (v * 5) / big);
      for (let half = 0; half < 40; half++) {
        const next = theta.map((v, i) => v + d[i]);
        const trial = tryEvaluate(objective, next);
        if (trial && trial.value >= current.value - 1e-12 * Math.max(1, Math.abs(current.value))) {
          theta = next;
          current = trial;
          accepted = true;
          break;
        }
        d = d.map((v) => v / 2);
      }
      lambda = lambda === 0 ? 1e-6 : lambda * 100;
    }
    if (!accepted) {
      return {
        theta,
        value: current.value,
        gradient: current.gradient,
        hessian,
        iterations: iteration,
        converged: false,
        reason: "no step increased the likelihood",
      };
    }
  }
  return {
    theta,
    value: current.value,
    gradient: current.gradient,
    hessian: numericHessian(objective, theta),
    iterations: maxIterations,
    converged: false,
    reason: `no convergence within ${maxIterations} iterations`,
  };
}
