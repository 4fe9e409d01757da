/**
 * Families and links of the generalized linear models (McCullagh and Nelder 1989, Generalized
 * Linear Models, 2nd ed., chapters 2, 4 and 6; negative binomial NB2 as in Venables and Ripley
 * 2002, Modern Applied Statistics with S, 7.4). Bounds on the inverse links keep fitted values
 * inside the open parameter space, as is usual.
 */
import jStat from "jstat";
import { incompleteBeta, normalCdf, normalDensity, normalQuantile, upperGamma } from "../distributions";
import { EngineError } from "../errors";
import type { Link } from "../model-spec";

const EPS = Number.EPSILON;

export interface LinkFunctions {
  readonly name: Link;
  /** η = g(μ). */
  link(mu: number): number;
  /** μ = g⁻¹(η). */
  inverse(eta: number): number;
  /** dμ/dη. */
  derivative(eta: number): number;
}

const logit: LinkFunctions = {
  name: "logit",
  link: (mu) => Math.log(mu / (1 - mu)),
  inverse: (eta) => {
    const t = eta < -30 ? EPS : eta > 30 ? 1 / EPS : Math.exp(eta);
    return t / (1 + t);
  },
  derivative: (eta) => {
    if (eta > 30 || eta < -30) return EPS;
    const e = Math.exp(eta);
    return e / ((1 + e) * (1 + e));
  },
};

// Φ⁻¹(ε): the probit linear predictor is held within ±8.13 so that μ stays in (ε, 1 − ε)
const PROBIT_BOUND = -normalQuantile(EPS);
const probit: LinkFunctions = {
  name: "probit",
  link: (mu) => normalQuantile(mu),
  inverse: (eta) => normalCdf(Math.min(Math.max(eta, -PROBIT_BOUND), PROBIT_BOUND)),
  derivative: (eta) => Math.max(normalDensity(eta), EPS),
};

const cloglog: LinkFunctions = {
  name: "cloglog",
  link: (mu) => Math.log(-Math.log1p(-mu)),
  inverse: (eta) => Math.max(Math.min(-Math.expm1(-Math.exp(eta)), 1 - EPS), EPS),
  derivative: (eta) => {
    const e = Math.min(eta, 700);
    return Math.max(Math.exp(e) * Math.exp(-Math.exp(e)), EPS);
  },
};

const log: LinkFunctions = {
  name: "log",
  link: (mu) => Math.log(mu),
  inverse: (eta) => Math.max(Math.exp(eta), EPS),
  derivative: (eta) => Math.max(Math.exp(eta), EPS),
};

export function linkFunctions(name: Link): LinkFunctions {
  switch (name) {
    case "logit":
      return logit;
    case "probit":
      return probit;
    case "cloglog":
      return cloglog;
    case "log":
      return log;
    default:
      throw new EngineError(`link "${name}" is not available for this family`);
  }
}

export type GlmFamilyName = "binomial" | "poisson" | "quasipoisson" | "negative-binomial";

export interface GlmFamily {
  readonly name: GlmFamilyName;
  /** Variance function V(μ). */
  variance(mu: number): number;
  /** Unit deviance contribution (times prior weight w). */
  deviance(y: number, mu: number, w: number): number;
  /** Log-likelihood contribution (times prior weight w); NaN for quasi families. */
  logLikelihood(y: number, mu: number, w: number): number;
  /** Starting value of μ for IRLS. */
  start(y: number, w: number): number;
  /** Distribution function F(y) of one observation (for quantile residuals). */
  cdf(y: number, mu: number): number;
  /** True when the dispersion is estimated (quasi-Poisson). */
  readonly estimatedDispersion: boolean;
}

function ylogy(y: number, mu: number): number {
  return y > 0 ? y * Math.log(y / mu) : 0;
}

const lgamma = (x: number) => jStat.gammaln(x);

export const binomialFamily: GlmFamily = {
  name: "binomial",
  variance: (mu) => mu * (1 - mu),
  deviance: (y, mu, w) => 2 * w * (ylogy(y, mu) + ylogy(1 - y, 1 - mu)),
  logLikelihood: (y, mu, w) => w * (y * Math.log(mu) + (1 - y) * Math.log(1 - mu)),
  start: (y, w) => (w * y + 0.5) / (w + 1),
  cdf: (y, mu) => (y < 0 ? 0 : y < 1 ? 1 - mu : 1),
  estimatedDispersion: false,
};

function poissonCdf(y: number, mu: number): number {
  if (y < 0) return 0;
  // P(Y ≤ y) = Q(y + 1, μ), the regularized upper incomplete gamma
  return upperGamma(Math.floor(y) + 1, mu);
}

export const poissonFamily: GlmFamily = {
  name: "poisson",
  variance: (mu) => mu,
  deviance: (y, mu, w) => 2 * w * (ylogy(y, mu) - (y - mu)),
  logLikelihood: (y, mu, w) => w * (y * Math.log(mu) - mu - lgamma(y + 1)),
  start: (y) => y + 0.1,
  cdf: poissonCdf,
  estimatedDispersion: false,
};

export const quasiPoissonFamily: GlmFamily = {
  ...poissonFamily,
  name: "quasipoisson",
  logLikelihood: () => NaN,
  estimatedDispersion: true,
};

/** Negative binomial (NB2) with shape θ: V(μ) = μ + μ²/θ. */
export function negativeBinomialFamily(theta: number): GlmFamily {
  return {
    name: "negative-binomial",
    variance: (mu) => mu + (mu * mu) / theta,
    deviance: (y, mu, w) =>
      2 * w * (y * Math.log(Math.max(1, y) / mu) - (y + theta) * Math.log((y + theta) / (mu + theta))),
    logLikelihood: (y, mu, w) =>
      w *
      (lgamma(theta + y) -
        lgamma(theta) -
        lgamma(y + 1) +
        theta * Math.log(theta) +
        y * Math.log(mu) -
        (theta + y) * Math.log(theta + mu)),
    start: (y) => y + 0.1,
    // P(Y ≤ y) = I_{θ/(θ+μ)}(θ, y + 1)
    cdf: (y, mu) => (y < 0 ? 0 : incompleteBeta(theta / (theta + mu), theta, Math.floor(y) + 1)),
    estimatedDispersion: false,
  };
}
