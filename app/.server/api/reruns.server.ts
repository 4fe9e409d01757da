/**
 * API: reruns with their status, results summary, checks, findings, signatures and
 * sensitivity comparison. The guard is the report permission; people who may also read
 * reruns (rerun.view) see every rerun, the others (sponsor readers) only published ones, as
 * on the report pages. Subject identifiers are given only to people who see subjects
 * (`seesSubjects`); everyone else reads ranks and counts (redaction.server.ts).
 */
import { populationStepsOf } from "../reruns/rerun-population";
import { and, desc, eq } from "drizzle-orm";
import { familyWithLink } from "~/engine/family-names";
import { t } from "../db/index.server";
import { findingsOf, signaturesOf } from "../reruns/findings.server";
import { checkView, reportedContrasts, treatmentEffectOf } from "../reruns/rerun-view.server";
import {
  rerunListRows,
  studyRerunListRows,
  storedRerunDocument,
  type RerunListRow,
} from "../reruns/rerun-rows.server";
import { reproductionCheckOf, sensitivityReruns, type RerunDocument } from "../reruns/reruns.server";
import { requireStudyForPrincipal } from "../study-access.server";
import { seesSubjects } from "../permissions.server";
import { redactionFor, type Redaction } from "../redaction.server";
import { ApiError } from "./respond.server";
import { repeatedResultsOut } from "./repeated-results.server";
import type { Body, RerunAnswer, RerunsAnswer } from "./schemas";
import type { ApiPrincipal } from "./tokens.server";

type RerunOut = Body<typeof RerunAnswer>["rerun"];

const finite = (x: number | null | undefined): number | null =>
  typeof x === "number" && Number.isFinite(x) ? x : null;

/** Who may see what of a study's reruns, by the permission table. */
async function rerunAccess(p: ApiPrincipal, studyId: string) {
  const access = await requireStudyForPrincipal(p, studyId, "report.view");
  return {
    study: access.study,
    everyRerun: access.allowed.has("rerun.view"),
    withSubjectIds: seesSubjects(access),
  };
}

async function rerunsOfStudy(studyId: string, only?: string) {
  const rows = only
    ? await rerunListRows(and(eq(t.reruns.studyId, studyId), eq(t.reruns.id, only)), desc(t.reruns.createdAt))
    : await studyRerunListRows(studyId);
  return rows.map((row) => ({ row: row.r, out: rerunOut(row) }));
}

function rerunOut({ r, m, dv, d, pv, findings }: RerunListRow): RerunOut {
  return {
    id: r.id,
    kind: r.kind,
    label: r.label,
    status: r.status,
    failureReason: r.failureReason,
    plannedModel: { id: m.id, key: m.key, title: m.title },
    planVersion: { id: pv.id, version: pv.version },
    dataset: { versionId: dv.id, name: d.name, version: dv.version, sha256: dv.sha256 },
    engineVersion: r.engineVersion,
    resultSha256: r.resultSha256,
    parentRerunId: r.parentRerunId,
    prespecified: r.prespecified,
    findings,
    createdAt: r.createdAt,
    finishedAt: r.finishedAt,
    signedAt: r.signedAt,
    publishedAt: r.publishedAt,
  };
}

export async function listStudyReruns(p: ApiPrincipal, studyId: string): Promise<Body<typeof RerunsAnswer>> {
  const { study, everyRerun } = await rerunAccess(p, studyId);
  const rows = await rerunsOfStudy(study.id);
  return { reruns: rows.filter((r) => everyRerun || r.row.publishedAt !== null).map((r) => r.out) };
}

/** The results summary of a rerun; a repeated-measures model's subject-level parts only when `redact` lets subjects through. */
function resultsOut(doc: RerunDocument, redact: Redaction): NonNullable<Body<typeof RerunAnswer>["results"]> {
  if (doc.result.kind === "cox") {
    // Cox models: log hazard ratios (robust SE when the fit is robust); the full answer is the headless command's
    const c = doc.result;
    const nothing = {
      sigma: null,
      rSquared: null,
      adjRSquared: null,
      fStatistic: null,
      fP: null,
      aic: null,
      deviance: null,
      dispersion: null,
    };
    return {
      description: doc.description,
      method: `Cox proportional hazards (partial likelihood, ${c.ties} ties${c.strata.length ? `, ${c.strata.length} strata` : ""})`,
      family: "cox",
      link: "log",
      familyLabel: familyWithLink("cox", "log"),
      covarianceType: null,
      n: c.n,
      rank: c.coefficients.length,
      dfResidual: null,
      rows: doc.rows,
      coefficients: c.coefficients.map((x) => ({
        name: x.name,
        term: x.term,
        estimate: finite(x.estimate),
        se: finite(c.robust ? x.robustSe : x.se),
        statistic: finite(x.statistic),
        p: finite(x.p),
        lower: finite(x.lower),
        upper: finite(x.upper),
      })),
      fit: nothing,
      population: populationStepsOf(doc),
      treatmentEffect: null,
      adjustedMeans: null,
      contrasts: null,
      repeated: null,
    };
  }
  if (doc.result.kind === "repeated") return repeatedResultsOut(doc, doc.result, redact);
  const r = doc.result;
  const common = {
    description: doc.description,
    method: r.method.description,
    family: r.family,
    link: r.link,
    familyLabel: familyWithLink(r.family, r.link),
    n: r.n,
    rank: r.rank,
    dfResidual: finite(r.dfResidual),
    rows: doc.rows,
    population: populationStepsOf(doc),
    treatmentEffect: treatmentEffectOf(doc),
    coefficients: r.coefficients.map((c) => ({
      name: c.name,
      term: c.term,
      estimate: finite(c.estimate),
      se: finite(c.se),
      statistic: finite(c.statistic),
      p: finite(c.p),
      lower: finite(c.lower),
      upper: finite(c.upper),
    })),
  };
  if (r.kind !== "linear") {
    // Generalized linear models: deviance-based fit and the marginal (standardized) contrasts.
    return {
      ...common,
      covarianceType: null,
      fit: {
        sigma: null,
        rSquared: null,
        adjRSquared: null,
        fStatistic: null,
        fP: null,
        aic: finite(r.fit.aic),
        deviance: finite(r.fit.deviance),
        dispersion: finite(r.fit.dispersion),
      },
      adjustedMeans: null,
      contrasts:
        r.marginalEffects?.contrasts.map((c) => ({
          label: `${c.level} vs ${c.reference} (${c.measure})`,
          level: c.level,
          reference: c.reference,
          estimate: finite(c.estimate),
          ...contrastNumbers(c),
          hc3: c.robust ? contrastNumbers(c.robust) : null,
        })) ?? null,
      repeated: null,
    };
  }
  return {
    ...common,
    covarianceType: r.covarianceType,
    fit: {
      sigma: finite(r.fit.sigma),
      rSquared: finite(r.fit.rSquared),
      adjRSquared: finite(r.fit.adjRSquared),
      fStatistic: finite(r.fit.fStatistic),
      fP: finite(r.fit.fP),
      aic: finite(r.fit.aic),
      deviance: null,
      dispersion: null,
    },
    adjustedMeans:
      r.adjustedMeans?.map((a) => ({
        level: a.level,
        estimate: finite(a.estimate),
        se: finite(a.se),
        lower: finite(a.lower),
        upper: finite(a.upper),
        hc3: { se: finite(a.hc3.se), lower: finite(a.hc3.lower), upper: finite(a.hc3.upper) },
      })) ?? null,
    contrasts:
      r.contrasts?.map((c) => ({
        label: c.label,
        level: c.level,
        reference: c.reference,
        estimate: finite(c.estimate),
        ...contrastNumbers(c),
        hc3: contrastNumbers(c.hc3),
      })) ?? null,
    repeated: null,
  };
}

/** A contrast's interval, statistic and p (adjusted p when the plan names a method). */
function contrastNumbers(c: {
  se: number;
  statistic: number;
  p: number;
  pAdjusted?: number;
  lower: number;
  upper: number;
}) {
  return {
    se: finite(c.se),
    statistic: finite(c.statistic),
    p: finite(c.p),
    ...(c.pAdjusted !== undefined ? { pAdjusted: finite(c.pAdjusted) } : {}),
    lower: finite(c.lower),
    upper: finite(c.upper),
  };
}

function checksOut(doc: RerunDocument, redact: Redaction): Body<typeof RerunAnswer>["checks"] {
  const reproduction = reproductionCheckOf(doc);
  const extra = reproduction ? [{ ...reproduction, numbers: null, flaggedCount: 0, flagged: [] }] : [];
  return [
    ...extra,
    ...doc.checks.map((c) => {
      const v = checkView(c, redact);
      return {
        key: c.key,
        label: c.label,
        outcome: c.outcome,
        statistic: v.statistic,
        threshold: c.threshold,
        numbers: c.numbers
          ? {
              ...c.numbers,
              statistic: finite(c.numbers.statistic),
              df: c.numbers.df?.map((d) => finite(d)) ?? null,
              p: finite(c.numbers.p),
            }
          : null,
        summary: v.summary,
        remedy: v.remedy,
        flaggedCount: v.flaggedCount,
        flagged: v.flagged.map((f) => ({
          rank: f.rank,
          value: finite(f.value),
          ...(redact.seesSubjects ? { subjectId: f.who } : {}),
        })),
      };
    }),
  ];
}

export async function getStudyRerun(
  p: ApiPrincipal,
  studyId: string,
  rerunId: string,
): Promise<Body<typeof RerunAnswer>> {
  const { study, everyRerun, withSubjectIds } = await rerunAccess(p, studyId);
  const [found] = await rerunsOfStudy(study.id, rerunId);
  // An unpublished rerun does not exist for a reader who may see only published ones.
  if (!found || (!everyRerun && found.row.publishedAt === null))
    throw new ApiError("not_found", "There is no such rerun in this study.");
  const doc = await storedRerunDocument(found.row);
  const [findings, signatures, children] = await Promise.all([
    findingsOf(rerunId),
    signaturesOf(rerunId),
    found.row.kind === "primary" ? sensitivityReruns(rerunId) : Promise.resolve([]),
  ]);
  const shownChildren = await Promise.all(
    children
      .filter((c) => everyRerun || c.publishedAt !== null)
      .map(async (c) => ({ row: c, doc: await storedRerunDocument(c) })),
  );
  const redact = await redactionFor(withSubjectIds, [
    { doc, datasetVersionId: found.row.datasetVersionId },
    ...shownChildren.map((c) => ({ doc: c.doc, datasetVersionId: c.row.datasetVersionId })),
  ]);
  const txt = (s: string, key?: string | null) => redact.text(s, key);
  const body: Body<typeof RerunAnswer> = {
    rerun: {
      ...found.out,
      label: found.out.label === null ? null : txt(found.out.label),
      failureReason: found.out.failureReason === null ? null : txt(found.out.failureReason),
    },
    results: doc ? resultsOut(doc, redact) : null,
    checks: doc ? checksOut(doc, redact) : [],
    reproduction: doc?.reproduction
      ? {
          ...doc.reproduction,
          values: doc.reproduction.values.map((v) => ({ ...v, rerunValue: finite(v.rerunValue) })),
        }
      : null,
    findings: findings.map((f) => ({
      id: f.id,
      kind: f.kind,
      checkKey: f.checkKey,
      statistic: f.statistic === null ? null : txt(f.statistic, f.checkKey),
      threshold: f.threshold,
      summary: txt(f.summary, f.checkKey),
      assessment: f.assessment
        ? {
            category: f.assessment.category,
            impact: f.assessment.impact,
            action: f.assessment.action,
            rationale: txt(f.assessment.rationale, f.checkKey),
            recordedBy: f.assessment.recordedByName,
            recordedAt: f.assessment.recordedAt,
          }
        : null,
    })),
    signatures: signatures.map((s) => ({
      signerName: s.signerName,
      meaning: s.meaning,
      signedAt: s.signedAt,
    })),
    sensitivity: shownChildren.map(({ row, doc: d }) => ({
      id: row.id,
      label: row.label === null ? null : txt(row.label),
      status: row.status,
      prespecified: row.prespecified,
      contrasts: d
        ? reportedContrasts(d).map((c) => ({
            label: c.label,
            estimate: finite(c.estimate),
            lower: finite(c.lower),
            upper: finite(c.upper),
            p: finite(c.p),
          }))
        : [],
    })),
  };
  return redact.assertClean(body, "A rerun answer");
}
