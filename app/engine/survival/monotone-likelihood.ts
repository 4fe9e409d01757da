/**
 * Detection of monotone likelihood (Bryson and Johnson 1981; Heinze and Schemper 2001): the
 * partial likelihood keeps rising as an estimate runs to ±∞, so the maximum-likelihood estimate
 * does not exist. It happens when a direction d in coefficient space ranks every event at the
 * top of its risk set, x_i'd ≥ x_j'd for each event i and everyone j still at risk then (for
 * example an arm with no events). Newton–Raphson then drifts along d while the log-likelihood
 * settles; we take d from the last step (or the estimate), check the ranking, and confirm the
 * log-likelihood does not fall further along d. The survival analogue of separation in
 * logistic models.
 */
import type { CoxData } from "./cox-data";
import type { Ties } from "./cox-spec";
import { linearPredictor, sweep } from "./partial-likelihood";

export interface MonotoneFinding {
  /** Coefficients (indices) that diverge. */
  readonly coefficients: readonly number[];
  /** Sign of the divergence per listed coefficient (+1 towards +∞). */
  readonly signs: readonly number[];
}

function ranksEventsFirst(data: CoxData, d: Float64Array): boolean {
  const { n, p, x, order, blocks } = data;
  const z = new Float64Array(n);
  for (let j = 0; j < p; j++) for (let i = 0; i < n; i++) z[i] += x[j * n + i] * d[j];
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(z[i]));
  if (!(scale > 0)) return false;
  const tol = 1e-6 * scale;
  // walk each stratum from the latest time, keeping the largest z among rows at risk that are not tied events
  let current = -1;
  let maxLater = -Infinity;
  let strict = false;
  for (let b = blocks.length - 1; b >= 0; b--) {
    const block = blocks[b];
    if (block.stratum !== current) {
      current = block.stratum;
      maxLater = -Infinity;
    }
    let maxCensoredHere = -Infinity;
    for (let q = block.start; q < block.end; q++) {
      const i = order[q];
      if (data.status[i] === 0) maxCensoredHere = Math.max(maxCensoredHere, z[i]);
    }
    const atRiskMax = Math.max(maxLater, maxCensoredHere);
    for (const q of block.deaths) {
      const zi = z[order[q]];
      if (zi < atRiskMax - tol) return false;
      if (zi > atRiskMax + tol) strict = true;
    }
    for (let q = block.start; q < block.end; q++) maxLater = Math.max(maxLater, z[order[q]]);
  }
  return strict;
}

export function detectMonotoneLikelihood(
  data: CoxData,
  ties: Ties,
  beta: Float64Array,
  lastStep: Float64Array,
): MonotoneFinding | null {
  for (const candidate of [lastStep, beta]) {
    const size = Math.max(...Array.from(candidate, Math.abs));
    if (!(size > 0) || !Number.isFinite(size)) continue;
    const d = candidate.map((v) => v / size);
    if (!ranksEventsFirst(data, d)) continue;
    const at = (t: number) =>
      sweep(
        data,
        linearPredictor(
          data,
          beta.map((b, j) => b + t * d[j]),
        ),
        ties,
        false,
      ).logLik;
    const here = at(0);
    const further = at(8);
    if (!(further >= here - 1e-9 * (1 + Math.abs(here)))) continue;
    const coefficients: number[] = [];
    const signs: number[] = [];
    d.forEach((v, j) => {
      if (Math.abs(v) > 1e-2) {
        coefficients.push(j);
        signs.push(Math.sign(v));
      }
    });
    return { coefficients, signs };
  }
  return null;
}
