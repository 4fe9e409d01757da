/**
 * Restricted mean survival time to a horizon τ: the area under each arm's Kaplan–Meier curve
 * from 0 to τ, its variance by the Greenwood-type formula
 *   Var = Σ_{event times t ≤ τ} A(t)² · d / (n (n − d)),  A(t) = ∫_t^τ Ŝ(u) du,
 * (a time where every subject at risk has the event adds nothing), and the difference between
 * two arms with its standard error √(Var₁ + Var₂), Wald 95% interval and two-sided p.
 * Each arm's curve pools the strata and ignores case weights (the unadjusted comparison the
 * analysis is planned as). No npm package computes this; it is a few lines on top of our
 * Kaplan–Meier curve.
 */
import { normalQuantile, normalUpper } from "../distributions";
import { EngineError } from "../errors";
import { kaplanMeier } from "./kaplan-meier";

export interface RestrictedMean {
  /** Area under the curve from 0 to τ (time units of the data). */
  readonly mean: number;
  readonly se: number;
  readonly n: number;
  readonly events: number;
}

export interface RestrictedMeanDifference {
  readonly tau: number;
  readonly level: string;
  readonly reference: string;
  readonly arm: RestrictedMean;
  readonly referenceArm: RestrictedMean;
  /** level minus reference. */
  readonly difference: number;
  readonly se: number;
  readonly lower: number;
  readonly upper: number;
  readonly p: number;
}

/** The restricted mean of the given rows (indices into time and status; status 1 = event). */
export function restrictedMean(
  rows: readonly number[],
  time: ArrayLike<number>,
  status: ArrayLike<number>,
  tau: number,
): RestrictedMean {
  if (!(tau > 0) || !Number.isFinite(tau))
    throw new EngineError(`the horizon τ of the restricted mean must be a positive number, not ${tau}`);
  if (rows.length === 0)
    throw new EngineError("an arm has no subjects, so its restricted mean survival time cannot be computed");
  const km = kaplanMeier(rows, time, status);
  // step function: Ŝ = 1 before the first time, km.estimate[k] from km.time[k] on
  const starts = [0];
  const heights = [1];
  for (let k = 0; k < km.time.length && km.time[k] < tau; k++) {
    if (km.events[k] === 0) continue;
    starts.push(km.time[k]);
    heights.push(km.estimate[k]);
  }
  const pieces = starts.map((s, k) => heights[k] * ((k + 1 < starts.length ? starts[k + 1] : tau) - s));
  const mean = pieces.reduce((a, b) => a + b, 0);
  // A(t_k) = area from the k-th event time to τ, the tail sum of the pieces after it
  let variance = 0;
  let tail = 0;
  let piece = pieces.length - 1;
  const eventIdx = km.time.map((_, k) => k).filter((k) => km.events[k] > 0 && km.time[k] < tau);
  for (let e = eventIdx.length - 1; e >= 0; e--) {
    tail += pieces[piece--];
    const k = eventIdx[e];
    const d = km.events[k];
    const n = km.atRisk[k];
    if (n > d) variance += (tail * tail * d) / (n * (n - d));
  }
  return { mean, se: Math.sqrt(variance), n: rows.length, events: km.events.reduce((a, b) => a + b, 0) };
}

/** The difference in restricted mean survival time between two arms (level minus reference). */
export function restrictedMeanDifference(
  arms: { level: string; rows: readonly number[] },
  reference: { level: string; rows: readonly number[] },
  time: ArrayLike<number>,
  status: ArrayLike<number>,
  tau: number,
  confidence = 0.95,
): RestrictedMeanDifference {
  const a = restrictedMean(arms.rows, time, status, tau);
  const r = restrictedMean(reference.rows, time, status, tau);
  const difference = a.mean - r.mean;
  const se = Math.sqrt(a.se ** 2 + r.se ** 2);
  const z = normalQuantile(1 - (1 - confidence) / 2);
  const p = se > 0 ? 2 * normalUpper(Math.abs(difference) / se) : difference === 0 ? 1 : 0;
  return {
    tau,
    level: arms.level,
    reference: reference.level,
    arm: a,
    referenceArm: r,
    difference,
    se,
    lower: difference - z * se,
    upper: difference + z * se,
    p: Math.min(1, p),
  };
}

/**
 * Each non-reference arm against the reference: `arm[i]` is observation i's arm (time and status
 * aligned with it), `levels` the arms in the model's order.
 */
export function restrictedMeanByArm(
  time: readonly number[],
  status: readonly number[],
  arm: readonly string[],
  levels: readonly string[],
  reference: string,
  tau: number,
): RestrictedMeanDifference[] {
  if (!levels.includes(reference))
    throw new EngineError(
      `the reference arm "${reference}" is not among the treatment's levels (${levels.join(", ")})`,
    );
  const rowsOf = (level: string) => arm.flatMap((a, i) => (a === level ? [i] : []));
  const ref = { level: reference, rows: rowsOf(reference) };
  return levels
    .filter((l) => l !== reference)
    .map((level) => restrictedMeanDifference({ level, rows: rowsOf(level) }, ref, time, status, tau));
}
