/**
 * Checks of a generalized linear model's assumptions: overdispersion (Pearson χ²/df), deviance
 * goodness of fit, linearity of continuous covariates on the link scale (likelihood-ratio test
 * of an added quadratic term), homogeneity of the treatment effect across covariates
 * (likelihood-ratio test of treatment-by-covariate interactions), calibration of a binary model
 * by risk decile with the Hosmer–Lemeshow statistic (Hosmer and Lemeshow 1980), and binned
 * residuals (Gelman and Hill 2007, section 5.6).
 */
import { chiSquareUpper, fUpper } from "../distributions";

export interface ChiSquareCheck {
  readonly statistic: number | null;
  readonly df: number | null;
  readonly p: number | null;
  readonly reason?: string;
}

export interface OverdispersionCheck extends ChiSquareCheck {
  /** Pearson χ² / residual df (about 1 when the variance function holds). */
  readonly ratio: number | null;
  /** Plain-words reading. */
  readonly reading: string;
}

export interface LikelihoodRatioTest extends ChiSquareCheck {
  readonly term: string;
}

export interface CalibrationGroup {
  readonly n: number;
  readonly meanPredicted: number;
  readonly observed: number;
  readonly expected: number;
}

export interface Calibration extends ChiSquareCheck {
  readonly groups: readonly CalibrationGroup[];
  readonly caution: string;
}

export interface BinnedResidual {
  readonly n: number;
  readonly meanFitted: number;
  readonly meanResidual: number;
  /** ±2 standard errors of the mean residual under the model. */
  readonly bound: number;
}

/** Pearson χ²/df and its χ² test; not meaningful for 0/1 responses. */
export function overdispersion(pearsonChiSquare: number, df: number, family: string): OverdispersionCheck {
  if (family === "binomial") {
    return {
      statistic: null,
      df: null,
      p: null,
      ratio: null,
      reason: "not defined for 0/1 responses",
      reading: "Overdispersion cannot be judged from 0/1 responses.",
    };
  }
  const ratio = pearsonChiSquare / df;
  const p = chiSquareUpper(pearsonChiSquare, df);
  const name = family === "negative-binomial" ? "the negative binomial model" : "a Poisson model";
  let reading: string;
  if (family === "quasipoisson") {
    reading = `The dispersion is estimated (Pearson χ² per residual degree of freedom ${ratio.toFixed(2)}); standard errors are scaled by its square root.`;
  } else if (p < 0.05 && ratio > 1) {
    reading = `The counts vary about ${ratio.toFixed(1)} times as much as ${name} allows (Pearson χ² per residual degree of freedom ${ratio.toFixed(2)}, p = ${p.toPrecision(2)}); model-based standard errors are too small.`;
  } else if (ratio < 1 && chiSquareUpper(pearsonChiSquare, df) > 0.95) {
    reading = `The counts vary less than ${name} allows, which is underdispersion (Pearson χ² per residual degree of freedom ${ratio.toFixed(2)}).`;
  } else {
    reading = `No sign of overdispersion (Pearson χ² per residual degree of freedom ${ratio.toFixed(2)}, p = ${p.toPrecision(2)}).`;
  }
  return { statistic: pearsonChiSquare, df, p, ratio, reading };
}

/** Deviance goodness of fit, χ² on the residual df (counts only). */
export function devianceGoodnessOfFit(
  deviance: number,
  df: number,
  family: string,
  meanCount: number,
): ChiSquareCheck {
  if (family === "binomial")
    return { statistic: null, df: null, p: null, reason: "not meaningful for ungrouped 0/1 responses" };
  if (family === "quasipoisson")
    return {
      statistic: null,
      df: null,
      p: null,
      reason: "the dispersion is estimated, so the deviance has no reference distribution",
    };
  if (meanCount < 1)
    return {
      statistic: deviance,
      df,
      p: null,
      reason: "counts are too small for the χ² approximation (mean fitted count below 1)",
    };
  return { statistic: deviance, df, p: chiSquareUpper(deviance, df) };
}

/**
 * Likelihood-ratio statistic of a model against a larger one from two deviances (or −2 log-
 * likelihoods, for the negative binomial with θ fitted in each); χ², or F when the dispersion is
 * estimated, with the larger model's dispersion and residual df (as R's anova.glm).
 */
export function likelihoodRatio(
  term: string,
  devSmall: number,
  devLarge: number,
  df: number,
  dispersion: number | null,
  dfResidualLarge: number,
): LikelihoodRatioTest {
  if (df < 1)
    return {
      term,
      statistic: null,
      df: null,
      p: null,
      reason: "the added columns are aliased with the model",
    };
  const statistic = devSmall - devLarge;
  if (dispersion !== null) {
    const f = statistic / df / dispersion;
    return { term, statistic: f, df, p: fUpper(f, df, dfResidualLarge) };
  }
  return { term, statistic, df, p: chiSquareUpper(statistic, df) };
}

/** Observed and expected events by decile of predicted risk; Hosmer–Lemeshow χ² on g − 2 df. */
export function calibration(y: Float64Array, mu: Float64Array, groupsWanted = 10): Calibration {
  const n = y.length;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => mu[a] - mu[b] || a - b);
  const g = Math.min(groupsWanted, n);
  const groups: CalibrationGroup[] = [];
  let statistic = 0;
  for (let k = 0; k < g; k++) {
    const from = Math.floor((k * n) / g);
    const to = Math.floor(((k + 1) * n) / g);
    let observed = 0;
    let expected = 0;
    for (let r = from; r < to; r++) {
      observed += y[order[r]];
      expected += mu[order[r]];
    }
    const m = to - from;
    groups.push({ n: m, meanPredicted: expected / m, observed, expected });
    statistic += (observed - expected) ** 2 / (expected * (1 - expected / m));
  }
  const df = g - 2;
  return {
    statistic,
    df,
    p: chiSquareUpper(statistic, df),
    groups,
    caution:
      "The Hosmer–Lemeshow test has little power in small samples and rejects trivial misfit in large ones; read it with the decile table.",
  };
}

/** Mean response residual within bins of the fitted value (about √n bins of equal size). */
export function binnedResiduals(y: Float64Array, mu: Float64Array): BinnedResidual[] {
  const n = y.length;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => mu[a] - mu[b] || a - b);
  const bins = Math.max(1, Math.min(n, Math.round(Math.sqrt(n))));
  const out: BinnedResidual[] = [];
  for (let k = 0; k < bins; k++) {
    const from = Math.floor((k * n) / bins);
    const to = Math.floor(((k + 1) * n) / bins);
    const m = to - from;
    let f = 0;
    let r = 0;
    for (let t = from; t < to; t++) {
      f += mu[order[t]];
      r += y[order[t]] - mu[order[t]];
    }
    const meanFitted = f / m;
    out.push({
      n: m,
      meanFitted,
      meanResidual: r / m,
      bound: 2 * Math.sqrt((meanFitted * (1 - meanFitted)) / m),
    });
  }
  return out;
}
