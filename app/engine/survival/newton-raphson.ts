/**
 * Maximizes the partial likelihood by Newton–Raphson from β = 0, halving a step whenever the
 * log-likelihood falls. Converged means the log-likelihood changed by less than 1e-13 of itself
 * after a full step that moved no coefficient by more than 1e-9 (relative).
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

export function newtonRaphson(data: CoxData, ties: Ties): NewtonFit {
  const p = data.p;
  let beta: Float64Array = new Float64Array(p);
  const initial = sweep(data, linearPredictor(data, beta), ties, false);
  let current = initial;
  let lastStep: Float64Array = new Float64Array(p);
  let iterations = 0;
  let converged = false;
  let singularColumn: number | null = null;
  for (let iter = 1; iter <= MAX_ITERATIONS; iter++) {
    iterations = iter;
    const f = cholesky(current.info, p);
    if (!("l" in f)) {
      singularColumn = f.failedColumn;
      break;
    }
    const step = choleskySolve(f.l, p, current.score);
    lastStep = step;
    let candidate = beta.map((b, j) => b + step[j]);
    let next = sweep(data, linearPredictor(data, candidate), ties, false);
    let halvings = 0;
    while (!(next.logLik >= current.logLik) && halvings < MAX_HALVINGS) {
      candidate = candidate.map((b, j) => (b + beta[j]) / 2);
      next = sweep(data, linearPredictor(data, candidate), ties, false);
      halvings++;
    }
    if (!(next.logLik >= current.logLik)) break;
    const change = Math.abs(next.logLik - current.logLik);
    let moved = 0;
    for (let j = 0; j < p; j++) moved = Math.max(moved, Math.abs(candidate[j] - beta[j]) / (1 + Math.abs(candidate[j])));
    beta = candidate;
    current = next;
    if (halvings === 0 && change <= 1e-13 * Math.abs(current.logLik) && moved <= 1e-9) {
      converged = true;
      break;
    }
    if (halvings > 0 && moved === 0) break;
  }
  const final = sweep(data, linearPredictor(data, beta), ties, true);
  return { beta, logLik: final.logLik, initial, final, iterations, converged, lastStep, singularColumn };
}
