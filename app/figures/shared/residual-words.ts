/**
 * How a figure's axis names the residual it plots. A linear model's residual is y − ŷ in the
 * response's unit (√w·(y − ŷ) when weighted). A generalized linear model has several residuals on
 * different scales, so every axis says which one it shows: the randomized quantile residual
 * (Dunn and Smyth 1996; standard normal under the model, also for 0/1 and count outcomes), the
 * deviance or Pearson residual, or the working residual of a component-plus-residual plot, which
 * lives on the link scale.
 */
import type { FigureBase } from "./types";

/** The residual of the residual plots (against fitted values, a covariate, or by arm), with its unit. */
export function residualAxis(d: FigureBase): string {
  // "z": standard normal units; short, so the rotated title fits beside a 230-pixel plot
  if (d.glm) return "Randomized quantile residual (z)";
  if (d.weighted) return `Weighted residual √w·(y − ŷ) (${d.responseUnit})`;
  return `Residual, ${d.response} − fitted (${d.responseUnit})`;
}

/** The residual's name alone, for hover tables. */
export function residualName(d: FigureBase): string {
  return d.glm ? "Randomized quantile residual" : d.weighted ? "Weighted residual" : "Residual";
}

const LINK_UNITS: Record<string, string> = {
  logit: "log odds",
  log: "log of the mean",
  probit: "probit of the probability",
  cloglog: "complementary log-log",
  identity: "response scale",
};

/** The link scale's unit, short enough for an axis: "log odds", "log of the mean". */
export function linkUnit(d: FigureBase): string {
  const link = d.glm?.link ?? "identity";
  return LINK_UNITS[link] ?? link;
}

/** The link scale in words: "log odds (logit link)", "log of the mean (log link)". */
export function linkScale(d: FigureBase): string {
  return `${linkUnit(d)} (${d.glm?.link ?? "identity"} link)`;
}

/** The fitted value's axis: the mean (probability for a 0/1 endpoint) of a GLM, the response of a linear model. */
export function fittedAxis(d: FigureBase): string {
  if (d.glm?.family === "binomial") return `Fitted probability of the event (0 to 1)`;
  if (d.glm) return `Fitted mean of ${d.response} (${d.responseUnit})`;
  return `Fitted value of ${d.response} (${d.responseUnit})`;
}
