/**
 * Maximizes the partial likelihood by Newton–Raphson from β = 0, halving a step whenever the
 * log-likelihood falls. Converged means the Newton step moves no coefficient by more than 1e-12
 * of (1 + |β|), or, below 1e-7, stops shrinking (the rounding floor); near the maximum the step
 * shrinks quadratically, so this is reached in a few iterations, while an estimate running to
 * infinity keeps steps of order one and never is.
 */
import type { CoxData } from "./cox-data";
import type { Ties } from "./cox-spec";
import { linearPredictor, sweep, type Sweep } from "./partial-likelihood";
import { cholesky, choleskySolve } from "./symmetric";

export interface NewtonFit {
  readonly beta: Float64Array;
  readonly logLik: number;
  readonly initial: Sweep;
  readonly final: Sweep;
  readonly iterations: number;
  readonly converged: boolean;
  /** Last full Newton step (the direction a diverging estimate runs along). */
  readonly lastStep: Float64Array;
  /** Column whose information pivot vanished, when the information became singular. */
  readonly singularColumn: number | null;
}

const MAX_ITERATIONS = 100;
const MAX_HALVINGS = 40;
/** A Newton step no larger than this (relative to 1 + |β|) ends the iteration as converged. */
const TINY_STEP = 1e-12;
/** Below this size a step that stopped shrinking quadratically is at the rounding floor: converged. */
const NOISE_STEP = 1e-7;
/** Predicted log-likelihood gains below this (relative) are taken without a line search. */
const QUADRATIC_GAIN = 1e-8;

export function newtonRaphson(data: CoxData, ties: Ties): NewtonFit {
  const p = data.p;
  let beta: Float64Array = new Float64Array(p);
  const initial = sweep(data, linearPredictor(data, beta), ties, false);
  let current = initial;
  let lastStep: Float64Array = new Float64Array(p);
  let iterations = 0;
  let converged = false;
  let singularColumn: number | null = null;
  let previousSize = Infinity;
  for (let iter = 1; iter <= MAX_ITERATIONS; iter++) {
    iterations = iter;
    const f = cholesky(current.info, p);
    if (!("l" in f)) {
      singularColumn = f.failedColumn;
      break;
    }
    const step = choleskySolve(f.l, p, current.score);
    lastStep = step;
    let size = 0;
    let gain = 0;
    for (let j = 0; j < p; j++) {
      size = Math.max(size, Math.abs(step[j]) / (1 + Math.abs(beta[j])));
      gain += (step[j] * current.score[j]) / 2;
    }
    let candidate = beta.map((b, j) => b + step[j]);
    // near the maximum the quadratic model is exact to rounding, while differences of the
    // log-likelihood are not: take Newton's step as it is, and stop once it no longer shrinks
    if (gain <= QUADRATIC_GAIN * (1 + Math.abs(current.logLik))) {
      beta = candidate;
      current = sweep(data, linearPredictor(data, beta), ties, false);
      if (size <= TINY_STEP || (size <= NOISE_STEP && size >= previousSize / 2)) {
        converged = true;
        break;
      }
      previousSize = size;
      continue;
    }
    previousSize = size;
    let next = sweep(data, linearPredictor(data, candidate), ties, false);
    let halvings = 0;
    while (!(next.logLik >= current.logLik) && halvings < MAX_HALVINGS) {
      candidate = candidate.map((b, j) => (b + beta[j]) / 2);
      next = sweep(data, linearPredictor(data, candidate), ties, false);
      halvings++;
    }
    if (!(next.logLik >= current.logLik)) break;
    beta = candidate;
    current = next;
  }
  const final = sweep(data, linearPredictor(data, beta), ties, true);
  return { beta, logLik: final.logLik, initial, final, iterations, converged, lastStep, singularColumn };
}
