/**
 * Maximum-likelihood estimate of the negative binomial shape θ for fixed means (Newton's method
 * on the score, as in Venables and Ripley 2002, section 7.4, and Lawless 1987).
 */
import { EngineError } from "../errors";

/** ψ(x), by recurrence to x ≥ 6 and the asymptotic series (Abramowitz and Stegun 6.3.18). */
export function digamma(x: number): number {
  let r = 0;
  while (x < 6) {
    r -= 1 / x;
    x += 1;
  }
  const f = 1 / (x * x);
  return r + Math.log(x) - 0.5 / x - f * (1 / 12 - f * (1 / 120 - f * (1 / 252 - f * (1 / 240 - f / 132))));
}

/** ψ′(x), by recurrence to x ≥ 6 and the asymptotic series (Abramowitz and Stegun 6.4.12). */
export function trigamma(x: number): number {
  let r = 0;
  while (x < 6) {
    r += 1 / (x * x);
    x += 1;
  }
  const f = 1 / (x * x);
  return r + 1 / x + f / 2 + (f / x) * (1 / 6 - f * (1 / 30 - f * (1 / 42 - f / 30)));
}

/** θ̂ and its standard error √(1/I(θ̂)) for responses y with means μ and prior weights w. */
export function thetaMaximumLikelihood(
  y: Float64Array,
  mu: Float64Array,
  weights: Float64Array | null,
): { theta: number; se: number } {
  const n = y.length;
  let sw = 0;
  let s = 0;
  for (let i = 0; i < n; i++) {
    const w = weights ? weights[i] : 1;
    sw += w;
    s += w * (y[i] / mu[i] - 1) ** 2;
  }
  let theta = sw / s;
  if (!(theta > 0) || !Number.isFinite(theta)) theta = 1;
  let info = 0;
  for (let iter = 0; iter < 100; iter++) {
    let score = 0;
    info = 0;
    for (let i = 0; i < n; i++) {
      const w = weights ? weights[i] : 1;
      const yi = y[i];
      const mi = mu[i];
      score +=
        w *
        (digamma(theta + yi) -
          digamma(theta) +
          Math.log(theta) +
          1 -
          Math.log(theta + mi) -
          (yi + theta) / (mi + theta));
      info +=
        w *
        (-trigamma(theta + yi) +
          trigamma(theta) -
          1 / theta +
          2 / (mi + theta) -
          (yi + theta) / (mi + theta) ** 2);
    }
    let step = score / info;
    // keep θ positive
    while (theta + step <= 0) step /= 2;
    theta += step;
    if (Math.abs(step) < 1e-12 * theta) break;
    if (theta > 1e12) {
      throw new EngineError(
        "the negative binomial shape grows without bound: the counts show no overdispersion; use the Poisson family",
      );
    }
  }
  return { theta, se: Math.sqrt(1 / info) };
}
