/**
 * The headless rerun command's JSON answer for a repeated-measures model: a projection of the
 * full result onto the documented keys (the linear model's where they apply, plus `covariance`,
 * a `df` on each coefficient, `visit` on each adjusted mean and contrast, per-record residuals
 * and per-subject influence). Numbers that are undefined print as null.
 */
import { stringifyResult } from "../cli-result";
import type { TableInput } from "../data";
import { fitRepeatedModel, type RepeatedOptions, type RepeatedResult } from "./repeated-model";

function num(v: number | null | undefined): number | null {
  return v === null || v === undefined || !Number.isFinite(v) ? null : v;
}

const interval = (x: { estimate: number; se: number; df: number; lower: number; upper: number }) => ({
  estimate: num(x.estimate),
  se: num(x.se),
  df: num(x.df),
  lower: num(x.lower),
  upper: num(x.upper),
  seScale: "response" as const,
});

const test = (t: RepeatedResult["tests"]["treatment"]) =>
  t === null
    ? null
    : {
        hypothesis: t.hypothesis,
        statistic: num(t.statistic),
        numeratorDf: t.numeratorDf,
        denominatorDf: num(t.denominatorDf),
        p: num(t.p),
      };

/** The command's answer, typed: the API answers the same projection (app/.server/api/reruns.server.ts). */
export type RepeatedCliResult = ReturnType<typeof toRepeatedCliResult>;

export function toRepeatedCliResult(result: RepeatedResult) {
  const o = result.observations;
  const c = result.covariance;
  const am = result.adjustedMeans;
  const contrast = (x: NonNullable<typeof am>["contrasts"][number]) => ({
    label: x.label,
    level: x.level,
    reference: x.reference,
    visit: x.visit,
    ...interval(x),
    statistic: num(x.statistic),
    p: num(x.p),
    ...(x.pAdjusted !== undefined ? { pAdjusted: num(x.pAdjusted) } : {}),
  });
  return {
    engineVersion: result.engineVersion,
    caution: result.caution,
    family: "gaussian" as const,
    model: "repeated measures" as const,
    method: result.method,
    dfMethod: result.dfMethod,
    n: result.n,
    excluded: result.excluded,
    subjectCount: result.subjectCount,
    covariance: {
      structure: c.structure,
      planned: c.planned,
      attempts: c.attempts,
      converged: c.converged,
      iterations: c.iterations,
      logLik: num(c.logLik),
      aic: num(c.aic),
      bic: num(c.bic),
      parameterCount: c.parameterCount,
      visits: c.visits,
      matrix: c.matrix.map((row) => row.map(num)),
      correlation: c.correlation.map((row) => row.map(num)),
    },
    coefficients: result.coefficients.map((x) => ({
      name: x.name,
      ...interval(x),
      statistic: num(x.statistic),
      p: num(x.p),
    })),
    coefficientCovariance: {
      type: result.coefficientCovarianceType,
      names: result.coefficients.map((x) => x.name),
      matrix: result.coefficientCovariance.map((row) => row.map(num)),
    },
    adjustedMeans: am
      ? {
          treatment: am.treatment,
          weighting: am.weighting,
          grid: am.grid,
          means: am.means.map((m) => ({ level: m.level, visit: m.visit, ...interval(m) })),
          contrasts: am.contrasts.map(contrast),
          pairwise: am.pairwise.map(contrast),
        }
      : null,
    tests: {
      treatment: test(result.tests.treatment),
      treatmentByVisit: test(result.tests.treatmentByVisit),
      notes: result.tests.notes,
    },
    structureTest: result.structureTest,
    counts: result.counts,
    residualsByCell: result.residualsByCell.map((c) => ({ ...c, mean: num(c.mean), sd: num(c.sd) })),
    observations: o.row.map((row, i) => ({
      row,
      id: o.id[i],
      visit: o.visit[i],
      fitted: num(o.fitted[i]),
      residual: num(o.residual[i]),
      normalizedResidual: num(o.normalizedResidual[i]),
    })),
    influence: result.influence,
    subjects: result.subjects.map((s) => ({
      id: s.id,
      cooksDistance: num(s.cooksDistance),
      treatmentChange: s.treatmentChange.map(num),
    })),
  };
}

/** Fits a repeated-measures specification and returns the command's JSON text. */
export function repeatedCliAnswer(spec: unknown, table: TableInput, options: RepeatedOptions = {}): string {
  return stringifyResult(toRepeatedCliResult(fitRepeatedModel(spec, table, options)));
}
