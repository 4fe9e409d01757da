/**
 * Reports: what a sponsor reader sees of a published (signed) rerun. Only reruns with a
 * publication time are reports; anything else is "not found". A report carries the results
 * tables, the check outcomes, the findings with their assessments, the other deviations, the
 * sensitivity comparison, the signatures and the appendix, and never a subject-level row or a
 * subject id: influential subjects appear by count and rank only, and any subject id found in a
 * text (a check's statistic, a rationale someone typed) is withheld (redaction.server.ts).
 */
import { and, desc, eq, isNotNull, isNull } from "drizzle-orm";
import { data } from "react-router";
import { db, t } from "../db/index.server";
import { deviationLog, findingsOf, signaturesOf } from "../reruns/findings.server";
import { reportedContrasts, rerunView, type RerunView } from "../reruns/rerun-view.server";
import { redactionFor } from "../redaction.server";
import { rerunRows } from "../reruns/rerun-rows.server";
import {
  getRerun,
  sensitivityReruns,
  storedRerunDocument,
  type RerunDocument,
} from "../reruns/reruns.server";
import { reportFigures } from "./report-figures.server";
import { repeatedReportView } from "./repeated-report.server";

export interface ReportListing {
  id: string;
  modelKey: string;
  modelTitle: string;
  datasetName: string;
  datasetVersion: number;
  planVersion: number;
  publishedAt: string;
  signers: string[];
  findings: number;
  sensitivity: number;
}

/** The study's published primary reruns, newest first. */
export async function listReports(studyId: string): Promise<ReportListing[]> {
  const rows = await rerunRows(
    and(
      eq(t.reruns.studyId, studyId),
      eq(t.reruns.kind, "primary"),
      isNotNull(t.reruns.publishedAt),
      isNull(t.reruns.parentRerunId),
    ),
    desc(t.reruns.publishedAt),
  );
  return Promise.all(
    rows.map(async ({ r, m, dv, d, pv }) => {
      const [signatures, findings, children] = await Promise.all([
        signaturesOf(r.id),
        findingsOf(r.id),
        sensitivityReruns(r.id),
      ]);
      return {
        id: r.id,
        modelKey: m.key,
        modelTitle: m.title,
        datasetName: d.name,
        datasetVersion: dv.version,
        planVersion: pv.version,
        publishedAt: r.publishedAt ?? "",
        signers: signatures.map((s) => s.signerName),
        findings: findings.length,
        sensitivity: children.filter((c) => c.publishedAt).length,
      };
    }),
  );
}

export async function getReport(studyId: string, rerunId: string) {
  const notFound = () =>
    data({ message: "There is no published report with this id in this study." }, { status: 404 });
  let r: Awaited<ReturnType<typeof getRerun>>;
  try {
    r = await getRerun(studyId, rerunId);
  } catch {
    throw notFound();
  }
  if (!r.rerun.publishedAt || !r.doc) throw notFound();
  const doc = r.doc;
  const primaryId = r.rerun.parentRerunId ?? r.rerun.id;
  const [findings, signatures, children, deviations, appendix] = await Promise.all([
    findingsOf(primaryId),
    signaturesOf(primaryId),
    r.rerun.kind === "primary" ? sensitivityReruns(r.rerun.id) : Promise.resolve([]),
    deviationLog(studyId),
    latestAppendix(studyId, primaryId),
  ]);
  const published = await Promise.all(
    children
      .filter((c) => c.publishedAt && c.resultSha256)
      .map(async (c) => ({ ...c, doc: (await storedRerunDocument(c)) as RerunDocument })),
  );
  // A report is for sponsor readers, whoever opens it: it never names a subject.
  const redaction = await redactionFor(false, [
    { doc, datasetVersionId: r.dataset.versionId },
    ...published.map((c) => ({ doc: c.doc, datasetVersionId: c.datasetVersionId })),
  ]);
  const redact = (s: string) => redaction.text(s);
  // the diagnostic figures, influential subjects by rank (each figure's text checked for ids before it becomes a picture)
  const figures = await reportFigures(
    r.rerun.id,
    r.rerun.resultSha256,
    doc,
    r.dataset.versionId,
    r.model.title,
    redaction,
  );
  // a repeated-measures rerun has its own report part (the results tables in the appendix's words)
  const part =
    doc.result.kind === "repeated"
      ? repeatedReportView(doc, doc.result, redaction, r.rerun.id)
      : reportViewOf(rerunView(doc, redaction), redact);
  const comparison = [
    {
      id: r.rerun.id,
      label:
        r.rerun.kind === "primary"
          ? "Primary analysis as planned"
          : redact(r.rerun.label ?? "Sensitivity analysis"),
      prespecified: true,
      primary: true,
      contrasts: reportedContrasts(doc),
    },
    ...published.map((c) => ({
      id: c.id,
      label: redact(c.label ?? "Sensitivity analysis"),
      prespecified: c.prespecified,
      primary: false,
      contrasts: reportedContrasts(c.doc),
    })),
  ];
  const report = {
    rerun: {
      id: r.rerun.id,
      kind: r.rerun.kind,
      primaryId,
      label: r.rerun.label ? redact(r.rerun.label) : null,
      publishedAt: r.rerun.publishedAt,
      engineVersion: r.rerun.engineVersion,
      resultSha256: r.rerun.resultSha256,
      datasetSha256: r.rerun.datasetSha256,
    },
    model: { key: r.model.key, title: r.model.title },
    dataset: { name: r.dataset.name, version: r.dataset.version, sha256: r.dataset.sha256 },
    planVersion: { title: r.planVersion.title, version: r.planVersion.version },
    results: part.results,
    /** The reproduction check of the published values, when the plan gives them (reproduction-results.tsx). */
    reproduction: part.reproduction,
    checks: part.checks.map((c) => ({
      key: c.key,
      label: c.label,
      outcome: c.outcome,
      statistic: c.statistic,
      threshold: c.threshold,
      summary: c.summary,
      remedy: c.remedy,
      flagged: c.flagged,
      flaggedCount: c.flaggedCount,
      formula: c.formula,
    })),
    findings: findings.map((f) => ({
      id: f.id,
      summary: redaction.text(f.summary, f.checkKey),
      statistic: redaction.maybe(f.statistic, f.checkKey),
      threshold: f.threshold,
      assessment: f.assessment
        ? {
            category: f.assessment.category,
            impact: f.assessment.impact,
            action: f.assessment.action,
            rationale: redaction.text(f.assessment.rationale, f.checkKey),
            by: f.assessment.recordedByName,
            at: f.assessment.recordedAt,
          }
        : null,
    })),
    otherDeviations: deviations
      .filter((d) => d.finding === null && d.rerun?.id === primaryId)
      .map((d) => ({
        id: d.id,
        category: d.category,
        impact: d.impact,
        action: d.action,
        rationale: redact(d.rationale),
        by: d.recordedByName,
        at: d.recordedAt,
      })),
    comparison,
    figures,
    signatures: signatures.map((s) => ({ name: s.signerName, meaning: s.meaning, at: s.signedAt })),
    appendix,
    caution: doc.caution,
  };
  return redaction.assertClean(report, "A report");
}

export type Report = Awaited<ReturnType<typeof getReport>>;

/** The results part of a report of a linear, generalized linear or Cox rerun, from its results view. */
function reportViewOf(view: RerunView, redact: (s: string) => string) {
  return {
    results: {
      description: redact(view.description),
      method: view.method,
      rows: view.rows,
      n: view.n,
      dfResidual: "dfResidual" in view ? view.dfResidual : null,
      covarianceType: "covarianceType" in view ? view.covarianceType : "model",
      /** "linear", "glm" or "cox": which words the tables use (t or z, differences or ratios). */
      kind: view.kind,
      statisticName:
        view.kind === "glm" ? view.statisticName : view.kind === "cox" ? ("z" as const) : ("t" as const),
      /** The fit statistics as labelled rows; null for a Cox model (its tests are in `cox`). */
      fitStatistics: "fitStatistics" in view ? view.fitStatistics : null,
      coefficients: view.coefficients.map((c) => ({
        name: c.name,
        estimate: c.estimate,
        se: c.se,
        statistic: c.statistic,
        p: c.p,
        lower: c.lower,
        upper: c.upper,
      })),
      adjustedMeans: "adjustedMeans" in view && view.adjustedMeans ? view.adjustedMeans : null,
      adjustedMeansWeighting: "adjustedMeansWeighting" in view ? view.adjustedMeansWeighting : null,
      contrasts: "contrasts" in view ? view.contrasts : [],
      treatmentEffect: "treatmentEffect" in view ? view.treatmentEffect : null,
      /** Time-to-event models: hazard ratios, the model's tests and the proportional-hazards test (no subject-level data). */
      cox:
        view.kind === "cox"
          ? {
              robust: view.robust,
              ratios: view.ratios,
              tests: view.tests,
              proportionalHazards: view.proportionalHazards,
              events: view.fit.events,
              concordance: view.fit.concordance,
            }
          : null,
      repeated: null,
    },
    /** The reproduction check of the published values, when the plan gives them (reproduction-results.tsx). */
    reproduction: "reproduction" in view ? view.reproduction : null,
    checks: view.checks,
  };
}

/** The latest exported appendix that holds this rerun, if any. */
async function latestAppendix(
  studyId: string,
  rerunId: string,
): Promise<{ exportedAt: string; sha256: string } | null> {
  const rows = await db
    .select({
      exportedAt: t.appendices.exportedAt,
      sha256: t.appendices.sha256,
      rerunIdsJson: t.appendices.rerunIdsJson,
    })
    .from(t.appendices)
    .where(eq(t.appendices.studyId, studyId))
    .orderBy(desc(t.appendices.exportedAt));
  const hit = rows.find((a) => {
    try {
      return (JSON.parse(a.rerunIdsJson) as unknown[]).includes(rerunId);
    } catch {
      return false;
    }
  });
  return hit ? { exportedAt: hit.exportedAt, sha256: hit.sha256 } : null;
}
