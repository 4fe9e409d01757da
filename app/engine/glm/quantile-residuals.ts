/**
 * Randomized quantile residuals (Dunn and Smyth 1996, Journal of Computational and Graphical
 * Statistics 5, 236–244): r = Φ⁻¹(u) with u uniform between F(y⁻) and F(y), so that residuals of a
 * correct discrete model are exactly standard normal. The uniform draws come from a fixed-seed
 * generator (mulberry32), so a rerun reproduces them byte for byte.
 */
import { normalQuantile } from "../distributions";
import { mulberry32 } from "../seeded-uniform";
import type { GlmFamily } from "./families";

/** Seed of the generator; fixed so that results are reproducible. */
export const QUANTILE_RESIDUAL_SEED = 20261202;

/** One randomized quantile residual per observation. */
export function quantileResiduals(
  y: Float64Array,
  mu: Float64Array,
  family: GlmFamily,
  seed = QUANTILE_RESIDUAL_SEED,
): Float64Array {
  const next = mulberry32(seed);
  const out = new Float64Array(y.length);
  for (let i = 0; i < y.length; i++) {
    const lo = family.cdf(y[i] - 1, mu[i]);
    const hi = family.cdf(y[i], mu[i]);
    const u = lo + next() * (hi - lo);
    out[i] = normalQuantile(Math.min(Math.max(u, 1e-300), 1 - 1e-16));
  }
  return out;
}
