/**
 * The headless rerun command's JSON answer: a projection of the full result (the contract
 * validation scripts rely on). Numbers that are undefined (NaN) print as null. p-values are
 * carried as computed (down to about 1e-300), never rounded or floored.
 *
 * Every row with a standard error says on which scale it is (`seScale`):
 * - "response": the outcome's own scale (linear models, standardized means, risk differences);
 * - "link (<link>)": a GLM coefficient on its link scale (log odds for logit, log rate for log);
 * - "log": a ratio (risk, odds or rate ratio) whose SE, statistic and p are those of the log
 *   ratio, with the estimate and interval given back on the ratio scale.
 */
import type { LinearModelResult } from "./linear-model";
import type { GlmResult } from "./glm/glm-model";
import { familyWithLink } from "./family-names";
import type { QqShape } from "./qq-shape";

function num(v: number | null | undefined): number | null {
  return v === null || v === undefined || !Number.isFinite(v) ? null : v;
}

/** The coefficient covariance matrix with its row and column names. */
function covarianceOf(names: readonly string[], matrix: readonly (readonly number[])[], type: string) {
  return { type, names: [...names], matrix: matrix.map((row) => row.map(num)) };
}

/** The keys both answers open with: versions, caution, family and link, counts. */
function headOf(result: LinearModelResult | GlmResult) {
  return {
    engineVersion: result.engineVersion,
    caution: result.caution,
    family: result.family,
    link: result.link,
    familyLabel: familyWithLink(result.family, result.link),
    n: result.n,
    excluded: result.excluded,
    rank: result.rank,
    dfResidual: result.dfResidual,
  };
}

type Coefficient = LinearModelResult["coefficients"][number] | GlmResult["coefficients"][number];

/** The coefficient rows, each saying on which scale its SE is. */
function coefficientsOut(coefficients: readonly Coefficient[], seScale: string) {
  return coefficients.map((c) => ({
    name: c.name,
    estimate: num(c.estimate),
    se: num(c.se),
    statistic: num(c.statistic),
    p: num(c.p),
    lower: num(c.lower),
    upper: num(c.upper),
    seScale,
  }));
}

type Influence = Pick<
  LinearModelResult["observations"],
  "leverage" | "studentizedInternal" | "studentizedExternal" | "cooksDistance"
>;

/** Observation i's leverage, studentized residuals and Cook's distance. */
function influenceOf(o: Influence, i: number) {
  return {
    leverage: num(o.leverage[i]),
    studentizedInternal: num(o.studentizedInternal[i]),
    studentizedExternal: num(o.studentizedExternal[i]),
    cooksDistance: num(o.cooksDistance[i]),
  };
}

/** Variance inflation per term. */
function vifOut(vif: LinearModelResult["vif"] | GlmResult["vif"]) {
  return vif.map((v) => ({ term: v.term, gvif: num(v.gvif), df: v.df, adjusted: num(v.adjusted) }));
}

export interface CliObservation {
  readonly row: number;
  readonly id: string | null;
  readonly fitted: number | null;
  readonly residual: number | null;
  readonly leverage: number | null;
  readonly studentizedInternal: number | null;
  readonly studentizedExternal: number | null;
  readonly cooksDistance: number | null;
  readonly dffits: number | null;
  readonly dfbetas: (number | null)[];
}

/** The Q-Q reading with the numbers behind it (results stored before the quantile measures have only the reading and summary). */
function qqShapeOut(q: QqShape) {
  return {
    reading: q.reading,
    summary: q.summary,
    skewness: num(q.skewness),
    excessKurtosis: num(q.excessKurtosis),
    ...(q.withoutMostExtreme
      ? {
          withoutMostExtreme: {
            residual: num(q.withoutMostExtreme.residual),
            skewness: num(q.withoutMostExtreme.skewness),
            excessKurtosis: num(q.withoutMostExtreme.excessKurtosis),
          },
          quantileSkewness: num(q.quantileSkewness),
          quantileTailWeight: num(q.quantileTailWeight),
        }
      : {}),
  };
}

/** Standardized means and contrasts with the grid they average over and the scale of each SE. */
function glmMarginalEffects(result: GlmResult, m: NonNullable<GlmResult["marginalEffects"]>) {
  return {
    treatment: m.treatment,
    grid: {
      kind: "rows",
      n: result.n,
      description:
        "every analysed row predicted with the treatment set to each arm in turn, averaged with equal weight per row",
    },
    robustVariance: m.robustVariance,
    means: m.means.map((x) => ({ ...x, seScale: "response" })),
    contrasts: m.contrasts.map((x) => ({
      ...x,
      seScale: x.measure === "risk difference" ? "response" : "log",
    })),
  };
}

/** Projects a generalized linear model result onto the command's JSON keys. */
export function toGlmCliResult(result: GlmResult): Record<string, unknown> {
  const o = result.observations;
  return {
    ...headOf(result),
    coefficients: coefficientsOut(result.coefficients, `link (${result.link})`),
    covariance: covarianceOf(
      result.coefficients.map((c) => c.name),
      result.covariance,
      result.family === "quasipoisson" ? "model-based, scaled by the estimated dispersion" : "model-based",
    ),
    statisticName: result.statisticName,
    profileIntervals: result.profileIntervals,
    ratioName: result.ratioName,
    ratios: result.ratios,
    robustSE: result.robustSE,
    fit: {
      deviance: num(result.fit.deviance),
      nullDeviance: num(result.fit.nullDeviance),
      logLik: num(result.fit.logLik),
      aic: num(result.fit.aic),
      dispersion: num(result.fit.dispersion),
      iterations: result.fit.iterations,
      converged: result.fit.converged,
      ...(result.fit.theta !== undefined
        ? { theta: num(result.fit.theta), thetaSE: num(result.fit.thetaSE) }
        : {}),
    },
    events: result.events,
    eventsPerVariable: num(result.eventsPerVariable),
    notes: result.notes,
    observations: o.row.map((row, i) => ({
      row,
      id: o.id[i],
      fitted: num(o.fitted[i]),
      residual: num(o.residual[i]),
      pearson: num(o.pearson[i]),
      devianceResidual: num(o.devianceResidual[i]),
      ...influenceOf(o, i),
      dfbetas: o.dfbetas.map((c) => num(c[i])),
      quantileResidual: num(o.quantileResidual[i]),
    })),
    tests: result.checks,
    binnedResiduals: result.binnedResiduals,
    vif: vifOut(result.vif),
    qqShape: qqShapeOut(result.qqShape),
    ...(result.marginalEffects
      ? { marginalEffects: glmMarginalEffects(result, result.marginalEffects) }
      : {}),
    ...(result.marginalEffects
      ? {
          multiplicity: result.marginalEffects.multiplicity ?? "none",
          contrasts: result.marginalEffects.contrasts.map((c) => ({
            label: `${c.level} vs ${c.reference} (${c.measure})`,
            level: c.level,
            reference: c.reference,
            measure: c.measure,
            estimate: num(c.estimate),
            se: num(c.se),
            lower: num(c.lower),
            upper: num(c.upper),
            statistic: num(c.statistic),
            p: num(c.p),
            ...(c.pAdjusted !== undefined ? { pAdjusted: num(c.pAdjusted) } : {}),
            seScale: c.measure === "risk difference" ? "response" : "log",
          })),
        }
      : {}),
  };
}

/** Projects a result onto the command's JSON keys. */
export function toCliResult(result: LinearModelResult | GlmResult): Record<string, unknown> {
  if (result.kind === "glm") return toGlmCliResult(result);
  const o = result.observations;
  const observations: CliObservation[] = o.row.map((row, i) => ({
    row,
    id: o.id[i],
    fitted: num(o.fitted[i]),
    residual: num(o.residual[i]),
    ...influenceOf(o, i),
    dffits: num(o.dffits[i]),
    dfbetas: o.dfbetas.map((c) => num(c[i])),
  }));
  const out: Record<string, unknown> = {
    ...headOf(result),
    coefficients: coefficientsOut(result.coefficients, "response"),
    covariance: covarianceOf(
      result.coefficients.map((c) => c.name),
      result.covariance,
      result.covarianceType === "model" ? "model-based" : result.covarianceType,
    ),
    robustSE: {
      HC0: result.robustSE.HC0.map(num),
      HC1: result.robustSE.HC1.map(num),
      HC2: result.robustSE.HC2.map(num),
      HC3: result.robustSE.HC3.map(num),
    },
    fit: {
      sigma: num(result.fit.sigma),
      rSquared: num(result.fit.rSquared),
      adjRSquared: num(result.fit.adjRSquared),
      fStatistic: num(result.fit.fStatistic),
      fP: num(result.fit.fP),
      logLik: num(result.fit.logLikelihood),
      aic: num(result.fit.aic),
    },
    observations,
    tests: result.tests,
    vif: vifOut(result.vif),
    qqShape: qqShapeOut(result.qqShape),
  };
  if (result.adjustedMeans)
    out.adjustedMeans = result.adjustedMeans.map((m) => ({ ...m, seScale: "response" }));
  if (result.adjustedMeansGrid)
    out.adjustedMeansGrid = { weighting: result.adjustedMeansWeighting, ...result.adjustedMeansGrid };
  if (result.contrasts) {
    out.contrasts = result.contrasts.map((c) => ({ ...c, seScale: "response" }));
    out.contrastSet = result.contrastSet ?? "reference";
    out.multiplicity = result.multiplicity ?? "none";
  }
  return out;
}

/** JSON text of a value, with non-finite numbers written as null. */
export function stringifyResult(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) =>
    typeof v === "number" && !Number.isFinite(v) ? null : v,
  );
}
