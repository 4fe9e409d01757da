/**
 * A fitted generalized linear model read with heteroscedasticity-consistent (sandwich) standard
 * errors: the coefficient table, Wald z, p and intervals, and the ratios' intervals, all from the
 * HC covariance the fit already carries (`robustSE`, as sandwich::vcovHC on R's glm). The
 * estimates stay the maximum-likelihood ones. Profile-likelihood intervals assume the model's
 * variance, so the robust reading leaves them out. The marginal contrasts keep their robust
 * (Ye et al. 2023) variance beside the delta-method one, as in the planned fit.
 */
import { normalQuantile, normalUpper } from "../distributions";
import type { GlmResult } from "./glm-model";

export type SandwichType = "HC0" | "HC1" | "HC2" | "HC3";

export function withSandwichErrors(fit: GlmResult, type: SandwichType = "HC3"): GlmResult {
  const q = normalQuantile(0.975);
  const se = fit.robustSE[type];
  const coefficients = fit.coefficients.map((c, j) => {
    const s = se[j];
    const statistic = c.estimate / s;
    return {
      ...c,
      se: s,
      statistic,
      p: 2 * normalUpper(Math.abs(statistic)),
      lower: c.estimate - q * s,
      upper: c.estimate + q * s,
    };
  });
  const byName = new Map(coefficients.map((c) => [c.name, c]));
  const ratios = fit.ratios
    ? fit.ratios.map((r) => {
        const c = byName.get(r.name);
        return c
          ? {
              ...r,
              lower: Math.exp(c.lower),
              upper: Math.exp(c.upper),
              profileLower: null,
              profileUpper: null,
            }
          : r;
      })
    : null;
  return {
    ...fit,
    method: {
      kind: "robust",
      description: `${fit.method.description.replace(/^planned model, /, "")}, with ${type} heteroscedasticity-consistent (sandwich) standard errors`,
    },
    coefficients,
    statisticName: "z",
    ratios,
    profileIntervals: null,
  };
}
