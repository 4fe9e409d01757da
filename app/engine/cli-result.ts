/**
 * The headless rerun command's JSON answer: a projection of the full result (the contract
 * validation scripts rely on). Numbers that are undefined (NaN) print as null.
 */
import type { LinearModelResult } from "./linear-model";
import type { GlmResult } from "./glm/glm-model";

function num(v: number | null | undefined): number | null {
  return v === null || v === undefined || !Number.isFinite(v) ? null : v;
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

/** Projects a generalized linear model result onto the command's JSON keys. */
export function toGlmCliResult(result: GlmResult): Record<string, unknown> {
  const o = result.observations;
  return {
    engineVersion: result.engineVersion,
    caution: result.caution,
    family: result.family,
    link: result.link,
    n: result.n,
    excluded: result.excluded,
    rank: result.rank,
    dfResidual: result.dfResidual,
    coefficients: result.coefficients.map((c) => ({
      name: c.name,
      estimate: num(c.estimate),
      se: num(c.se),
      statistic: num(c.statistic),
      p: num(c.p),
      lower: num(c.lower),
      upper: num(c.upper),
    })),
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
      ...(result.fit.theta !== undefined ? { theta: num(result.fit.theta), thetaSE: num(result.fit.thetaSE) } : {}),
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
      leverage: num(o.leverage[i]),
      studentizedInternal: num(o.studentizedInternal[i]),
      studentizedExternal: num(o.studentizedExternal[i]),
      cooksDistance: num(o.cooksDistance[i]),
      dfbetas: o.dfbetas.map((c) => num(c[i])),
      quantileResidual: num(o.quantileResidual[i]),
    })),
    tests: result.checks,
    binnedResiduals: result.binnedResiduals,
    vif: result.vif.map((v) => ({ term: v.term, gvif: num(v.gvif), df: v.df, adjusted: num(v.adjusted) })),
    qqShape: { reading: result.qqShape.reading, summary: result.qqShape.summary },
    ...(result.marginalEffects ? { marginalEffects: result.marginalEffects } : {}),
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
    leverage: num(o.leverage[i]),
    studentizedInternal: num(o.studentizedInternal[i]),
    studentizedExternal: num(o.studentizedExternal[i]),
    cooksDistance: num(o.cooksDistance[i]),
    dffits: num(o.dffits[i]),
    dfbetas: o.dfbetas.map((c) => num(c[i])),
  }));
  const out: Record<string, unknown> = {
    engineVersion: result.engineVersion,
    caution: result.caution,
    family: result.family,
    link: result.link,
    n: result.n,
    excluded: result.excluded,
    rank: result.rank,
    dfResidual: result.dfResidual,
    coefficients: result.coefficients.map((c) => ({
      name: c.name,
      estimate: num(c.estimate),
      se: num(c.se),
      statistic: num(c.statistic),
      p: num(c.p),
      lower: num(c.lower),
      upper: num(c.upper),
    })),
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
    },
    observations,
    tests: result.tests,
    vif: result.vif.map((v) => ({ term: v.term, gvif: num(v.gvif), df: v.df, adjusted: num(v.adjusted) })),
    qqShape: { reading: result.qqShape.reading, summary: result.qqShape.summary },
  };
  if (result.adjustedMeans) out.adjustedMeans = result.adjustedMeans;
  if (result.contrasts) out.contrasts = result.contrasts;
  return out;
}

/** JSON text of a value, with non-finite numbers written as null. */
export function stringifyResult(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) => (typeof v === "number" && !Number.isFinite(v) ? null : v));
}
