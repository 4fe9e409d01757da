/**
 * The headless rerun command's JSON answer for a time-to-event (Cox) model: a projection of the
 * full result onto the documented keys. Numbers that are undefined print as null.
 */
import { stringifyResult } from "../cli-result";
import type { TableInput } from "../data";
import { fitCoxModel, type CoxResult } from "./cox-model";

function num(v: number | null | undefined): number | null {
  return v === null || v === undefined || !Number.isFinite(v) ? null : v;
}

const test = (t: { statistic: number; df: number; p: number } | null) =>
  t === null ? null : { statistic: num(t.statistic), df: t.df, p: num(t.p) };

export function toCoxCliResult(result: CoxResult): Record<string, unknown> {
  const o = result.observations;
  return {
    engineVersion: result.engineVersion,
    caution: result.caution,
    family: "cox",
    ties: result.ties,
    n: result.n,
    excluded: result.excluded,
    strata: result.strata,
    coefficients: result.coefficients.map((c) => ({
      name: c.name,
      estimate: num(c.estimate),
      se: num(c.se),
      ...(result.robust ? { robustSe: num(c.robustSe) } : {}),
      statistic: num(c.statistic),
      p: num(c.p),
      lower: num(c.lower),
      upper: num(c.upper),
    })),
    ratios: result.ratios.map((r) => ({
      name: r.name,
      ratio: num(r.ratio),
      lower: num(r.lower),
      upper: num(r.upper),
    })),
    fit: {
      logLik: num(result.fit.logLik),
      logLikNull: num(result.fit.logLikNull),
      events: result.fit.events,
      eventsPerCoefficient: num(result.fit.eventsPerCoefficient),
      concordance: num(result.fit.concordance),
      iterations: result.fit.iterations,
      converged: result.fit.converged,
    },
    tests: {
      likelihoodRatio: test(result.tests.likelihoodRatio),
      wald: test(result.tests.wald),
      score: test(result.tests.score),
      ...(result.tests.robustScore ? { robustScore: test(result.tests.robustScore) } : {}),
      logRank: test(result.tests.logRank),
      proportionalHazards: {
        transform: result.tests.proportionalHazards.transform,
        global: test(result.tests.proportionalHazards.global),
        terms: result.tests.proportionalHazards.terms.map((t) => ({ term: t.term, ...test(t) })),
      },
    },
    notes: result.notes,
    observations: o.row.map((row, i) => ({
      row,
      id: o.id[i],
      martingale: num(o.martingale[i]),
      deviance: num(o.deviance[i]),
      score: o.score.map((c) => num(c[i])),
      dfbeta: o.dfbeta.map((c) => num(c[i])),
      dfbetas: o.dfbetas.map((c) => num(c[i])),
    })),
    schoenfeld: result.schoenfeld.map((s) => ({
      row: s.row,
      time: s.time,
      residual: s.residual.map(num),
      scaled: s.scaled.map(num),
    })),
    survival: result.survival.map((s) => ({
      level: s.level,
      stratum: s.stratum,
      time: s.time,
      estimate: s.estimate.map(num),
      lower: s.lower.map(num),
      upper: s.upper.map(num),
      atRisk: s.atRisk,
    })),
  };
}

/** Fits a time-to-event specification and returns the command's JSON text. */
export function coxCliAnswer(spec: unknown, table: TableInput): string {
  return stringifyResult(toCoxCliResult(fitCoxModel(spec, table)));
}
