/**
 * API: the results of a repeated-measures (MMRM) rerun. The model-level parts are the headless
 * command's projection (`toRepeatedCliResult`), so the API and the command say the same; the
 * per-record `observations` and per-subject `subjects` go only to viewers who see subjects (the
 * caller's `Redaction`, made from `seesSubjects`), with the id as `subjectId`, as elsewhere in
 * the API. The summary fields every rerun answers carry the contrasts at the primary visit.
 */
import { familyWithLink } from "~/engine/family-names";
import type { RepeatedResult } from "~/engine/repeated/repeated-model";
import { toRepeatedCliResult } from "~/engine/repeated/repeated-result";
import { repeatedMethodWords } from "../appendix/repeated-content";
import { populationStepsOf } from "../reruns/rerun-population";
import { treatmentEffectOf } from "../reruns/rerun-view.server";
import type { RerunDocument } from "../reruns/reruns.server";
import type { Redaction } from "../redaction.server";
import type { Body, RerunAnswer } from "./schemas";

type Results = NonNullable<Body<typeof RerunAnswer>["results"]>;

const finite = (x: number | null | undefined): number | null =>
  typeof x === "number" && Number.isFinite(x) ? x : null;

export function repeatedResultsOut(doc: RerunDocument, r: RepeatedResult, redact: Redaction): Results {
  const {
    observations,
    subjects,
    engineVersion: _v,
    caution: _c,
    family: _f,
    model: _m,
    ...cli
  } = toRepeatedCliResult(r);
  const c = cli.covariance;
  const am = cli.adjustedMeans;
  const primary = (r.adjustedMeans?.contrasts ?? []).filter((x) => x.visit === r.influence.primaryVisit);
  return {
    description: doc.description,
    method: repeatedMethodWords(r),
    family: "gaussian",
    link: "identity",
    familyLabel: familyWithLink("gaussian", "identity"),
    covarianceType: null,
    n: r.n,
    rank: r.coefficients.length,
    dfResidual: null,
    rows: doc.rows,
    population: populationStepsOf(doc),
    treatmentEffect: treatmentEffectOf(doc),
    coefficients: r.coefficients.map((x) => ({
      name: x.name,
      term: x.term,
      estimate: finite(x.estimate),
      se: finite(x.se),
      statistic: finite(x.statistic),
      p: finite(x.p),
      lower: finite(x.lower),
      upper: finite(x.upper),
    })),
    fit: {
      sigma: null,
      rSquared: null,
      adjRSquared: null,
      fStatistic: null,
      fP: null,
      aic: finite(c.aic),
      deviance: null,
      dispersion: null,
    },
    adjustedMeans: null,
    contrasts: primary.map((x) => ({
      label: `${x.label}, ${x.visit}`,
      level: x.level,
      reference: x.reference,
      estimate: finite(x.estimate),
      se: finite(x.se),
      statistic: finite(x.statistic),
      p: finite(x.p),
      lower: finite(x.lower),
      upper: finite(x.upper),
      hc3: null,
    })),
    repeated: {
      ...cli,
      covariance: {
        ...c,
        attempts: c.attempts.map((a) => ({ ...a })),
        visits: [...c.visits],
      },
      adjustedMeans: am
        ? {
            ...am,
            grid: {
              covariates: am.grid.covariates.map((g) => ({ ...g })),
              factors: [...am.grid.factors],
              cells: am.grid.cells.map((x) => ({ levels: [...x.levels], weight: x.weight })),
            },
          }
        : null,
      structureTest: cli.structureTest ? { ...cli.structureTest } : null,
      counts: cli.counts.map((x) => ({ ...x })),
      influence: { ...cli.influence, contrasts: [...cli.influence.contrasts] },
      // subject-level parts: only for viewers who see subjects
      ...(redact.seesSubjects
        ? {
            observations: observations.map(({ id, ...o }) => ({ ...o, subjectId: id })),
            subjects: subjects.map(({ id, ...s }) => ({ subjectId: id, ...s })),
          }
        : {}),
    },
  };
}
