/**
 * Tests of the model's specification by nested F tests: Ramsey's RESET (Ramsey 1969; powers 2
 * and 3 of the fitted values added to the design) and homogeneity of regression slopes
 * (treatment-by-covariate interactions added, per continuous covariate and jointly; the
 * standard check of the ANCOVA assumption). The added columns are appended to the planned fit's
 * factorization (qr-update.ts), not refitted with the whole design.
 */
import { fillDesignColumn, termColumns, type ContinuousVariable } from "./design";
import { fUpper } from "./distributions";
import type { LinearFitContext } from "./linear-fit-context";
import { appendColumns, fitWithReduced, reduceColumns } from "./qr-update";
import type { FTest } from "./spread";

/** F test of a larger model against the fitted one, from their residual sums of squares and ranks. */
export function nestedFTest(rss0: number, rank0: number, rss1: number, rank1: number, n: number): FTest {
  const df1 = rank1 - rank0;
  const df2 = n - rank1;
  if (df1 < 1)
    return {
      statistic: null,
      df1: null,
      df2: null,
      p: null,
      reason: "the added columns are aliased with the model",
    };
  if (df2 < 1)
    return { statistic: null, df1, df2, p: null, reason: "no residual degrees of freedom are left" };
  const statistic = (rss0 - rss1) / df1 / (rss1 / df2);
  return { statistic, df1, df2, p: fUpper(statistic, df1, df2) };
}

/** RESET: adds the squared and cubed (standardized) fitted values; F on (2, n − p − 2). */
export function resetTest(ctx: LinearFitContext): FTest {
  const { design, fit } = ctx;
  const { n, p } = design;
  const offset = ctx.data.offset;
  // powers of the standardized linear predictor (same column space, better conditioned)
  const eta = new Float64Array(n);
  let mean = 0;
  for (let i = 0; i < n; i++) {
    eta[i] = fit.fitted[i] - (offset ? offset[i] : 0);
    mean += eta[i];
  }
  mean = design.intercept ? mean / n : 0;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (eta[i] - mean) ** 2;
  const sd = Math.sqrt(ss / Math.max(1, n - 1));
  if (!(sd > 0))
    return { statistic: null, df1: null, df2: null, p: null, reason: "the fitted values are constant" };
  const added = new Float64Array(n * 2);
  for (let i = 0; i < n; i++) {
    const z = (eta[i] - mean) / sd;
    added[i] = z * z;
    added[n + i] = z * z * z;
  }
  const big = appendColumns(fit, added, 2);
  if (big.rank < p + 2) {
    return {
      statistic: null,
      df1: null,
      df2: null,
      p: null,
      reason:
        "powers of the fitted values are collinear with the design (e.g. only categorical terms), so RESET has nothing to test",
    };
  }
  return nestedFTest(fit.rss, p, big.rss, big.rank, n);
}

export interface SlopeTest extends FTest {
  readonly covariate: string;
}

export interface HomogeneityOfSlopes extends FTest {
  /** One test per continuous covariate whose interaction with the treatment is not already in the model. */
  readonly byCovariate: readonly SlopeTest[];
}

/** Homogeneity of regression slopes across the treatment arms, per covariate and jointly. */
export function homogeneityOfSlopes(ctx: LinearFitContext): HomogeneityOfSlopes | null {
  const { spec, data, design, fit } = ctx;
  const treatment = spec.treatment;
  if (!treatment) return null;
  const covariates = design.terms
    .filter((t) => t.kind === "continuous")
    .map((t) => t.variables[0])
    .filter(
      (c) =>
        !design.terms.some(
          (t) =>
            t.kind === "interaction" &&
            t.variables.length === 2 &&
            t.variables.includes(c) &&
            t.variables.includes(treatment),
        ),
    )
    .filter((c) => (data.variables.get(c) as ContinuousVariable).kind === "continuous");
  if (covariates.length === 0) {
    return {
      statistic: null,
      df1: null,
      df2: null,
      p: null,
      reason: "the model has no continuous covariate without a treatment interaction",
      byCovariate: [],
    };
  }
  const n = design.n;
  // every interaction column is made and reduced against the fit once; each covariate's test
  // factors its own columns, the joint test all of them
  const plans = covariates.map((c) => termColumns([treatment, c], data.variables));
  const all = plans.flat();
  const buffer = new Float64Array(n * all.length);
  all.forEach((plan, j) =>
    fillDesignColumn(buffer.subarray(j * n, (j + 1) * n), plan.factors, data.variables),
  );
  const reduced = reduceColumns(fit, buffer, all.length);
  const test = (r: { rss: number; rank: number }): FTest => nestedFTest(fit.rss, design.p, r.rss, r.rank, n);
  let first = 0;
  const byCovariate = covariates.map((c, i) => {
    const columns = plans[i].map((_, j) => first + j);
    first += columns.length;
    return { covariate: c, ...test(fitWithReduced(reduced, columns)) };
  });
  return { ...test(fitWithReduced(reduced)), byCovariate };
}
