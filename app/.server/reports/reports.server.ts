/**
 * Reports: what a sponsor reader sees of a published (signed) rerun. Only reruns with a
 * publication time are reports; anything else is "not found". A report carries the results
 * tables, the check outcomes, the findings with their assessments, the other deviations, the
 * sensitivity comparison, the signatures and the appendix, and never a subject-level row or a
 * subject id: influential subjects appear by count and rank only, and any subject id found in a
 * text (a check's statistic, a rationale someone typed) is withheld.
 */
import { and, desc, eq, isNotNull, isNull } from "drizzle-orm";
import { data } from "react-router";
import { loadLockedTable } from "../datasets/catalog.server";
import { db, t } from "../db/index.server";
import { deviationLog, findingsOf, signaturesOf } from "../reruns/findings.server";
import { reportedContrasts, rerunView } from "../reruns/rerun-view.server";
import { getRerun, sensitivityReruns, type RerunDocument } from "../reruns/reruns.server";

export const WITHHELD = "(id withheld)";

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
  const rows = await db
    .select({ r: t.reruns, m: t.plannedModels, dv: t.datasetVersions, d: t.datasets, pv: t.planVersions })
    .from(t.reruns)
    .innerJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
    .innerJoin(t.datasetVersions, eq(t.datasetVersions.id, t.reruns.datasetVersionId))
    .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
    .innerJoin(t.planVersions, eq(t.planVersions.id, t.reruns.planVersionId))
    .where(and(eq(t.reruns.studyId, studyId), eq(t.reruns.kind, "primary"), isNotNull(t.reruns.publishedAt), isNull(t.reruns.parentRerunId)))
    .orderBy(desc(t.reruns.publishedAt));
  return Promise.all(
    rows.map(async ({ r, m, dv, d, pv }) => {
      const [signatures, findings, children] = await Promise.all([signaturesOf(r.id), findingsOf(r.id), sensitivityReruns(r.id)]);
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

/**
 * Replaces every known subject id in a text. Ids made of letters, digits, "_" and "-" are
 * matched as whole words (so "QMT301-0217" is found, and a number inside a statistic is left
 * alone); any other id is matched as it is written.
 */
export function subjectIdRedactor(ids: Iterable<string>): (text: string) => string {
  const words = new Set<string>();
  const other: string[] = [];
  for (const raw of ids) {
    const id = raw.trim();
    if (id.length === 0) continue;
    if (/^[\p{L}\p{N}_-]+$/u.test(id)) words.add(id);
    else other.push(id);
  }
  other.sort((a, b) => b.length - a.length);
  return (text) => {
    let out = text.replace(/[\p{L}\p{N}_-]+/gu, (w) => (words.has(w) ? WITHHELD : w));
    for (const id of other) out = out.split(id).join(WITHHELD);
    return out.replace(/subject \(id withheld\)/g, "a subject");
  };
}

/** Every subject id the rerun's data holds: the rows it used and, when the locked file is at hand, every row's id. */
async function subjectIds(doc: RerunDocument, datasetVersionId: string): Promise<Set<string>> {
  const ids = new Set<string>();
  for (const id of doc.result.observations.id) if (id) ids.add(id);
  const idColumn = doc.result.spec.id;
  if (idColumn) {
    try {
      const { table } = await loadLockedTable(datasetVersionId);
      for (const id of table.columns[idColumn] ?? []) if (id) ids.add(id);
    } catch {
      // The ids of the rows used are enough to keep the report clean.
    }
  }
  return ids;
}

/** A check's texts with each flagged subject named by rank ("the subject ranked 1"), then every other id withheld. */
function checkTexts(doc: RerunDocument, key: string, redact: (s: string) => string): (s: string) => string {
  const flagged = doc.checks.find((c) => c.key === key)?.flagged ?? [];
  return (s) => {
    let out = s;
    for (const f of flagged) if (f.id) out = out.split(`subject ${f.id}`).join(`the subject ranked ${f.rank}`);
    return redact(out);
  };
}

export async function getReport(studyId: string, rerunId: string) {
  const notFound = () => data({ message: "There is no published report with this id in this study." }, { status: 404 });
  let r: Awaited<ReturnType<typeof getRerun>>;
  try {
    r = await getRerun(studyId, rerunId);
  } catch {
    throw notFound();
  }
  if (!r.rerun.publishedAt || !r.doc) throw notFound();
  const doc = r.doc;
  const redact = subjectIdRedactor(await subjectIds(doc, r.dataset.versionId));
  const view = rerunView(doc, false);
  const primaryId = r.rerun.parentRerunId ?? r.rerun.id;
  const [findings, signatures, children, deviations, appendix] = await Promise.all([
    findingsOf(primaryId),
    signaturesOf(primaryId),
    r.rerun.kind === "primary" ? sensitivityReruns(r.rerun.id) : Promise.resolve([]),
    deviationLog(studyId),
    latestAppendix(studyId, primaryId),
  ]);
  const published = children.filter((c) => c.publishedAt && c.resultJson);
  const comparison = [
    { id: r.rerun.id, label: r.rerun.kind === "primary" ? "Primary analysis as planned" : redact(r.rerun.label ?? "Sensitivity analysis"), prespecified: true, primary: true, contrasts: reportedContrasts(doc) },
    ...published.map((c) => ({
      id: c.id,
      label: redact(c.label ?? "Sensitivity analysis"),
      prespecified: c.prespecified,
      primary: false,
      contrasts: reportedContrasts(JSON.parse(c.resultJson ?? "{}") as RerunDocument),
    })),
  ];
  return {
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
    results: {
      description: redact(view.description),
      method: view.method,
      rows: view.rows,
      n: view.n,
      dfResidual: "dfResidual" in view ? view.dfResidual : null,
      covarianceType: "covarianceType" in view ? view.covarianceType : "model",
      coefficients: view.coefficients.map((c) => ({ name: c.name, estimate: c.estimate, se: c.se, statistic: c.statistic, p: c.p, lower: c.lower, upper: c.upper })),
      adjustedMeans: "adjustedMeans" in view && view.adjustedMeans ? view.adjustedMeans : null,
      adjustedMeansWeighting: "adjustedMeansWeighting" in view ? view.adjustedMeansWeighting : null,
      contrasts: "contrasts" in view ? view.contrasts : [],
      /** Time-to-event models: hazard ratios, the model's tests and the proportional-hazards test (no subject-level data). */
      cox: view.kind === "cox" ? { robust: view.robust, ratios: view.ratios, tests: view.tests, proportionalHazards: view.proportionalHazards, events: view.fit.events, concordance: view.fit.concordance } : null,
    },
    checks: view.checks.map((c) => {
      const say = checkTexts(doc, c.key, redact);
      // The stored texts, so that a flagged subject reads "the subject ranked k" as in the findings.
      const stored = doc.checks.find((x) => x.key === c.key) ?? c;
      return {
        key: c.key,
        label: c.label,
        outcome: c.outcome,
        statistic: say(stored.statistic),
        threshold: c.threshold,
        summary: say(stored.summary),
        remedy: redact(c.remedy),
        flagged: c.flagged.map((f) => ({ rank: f.rank, value: f.value, who: `subject ranked ${f.rank}` })),
        flaggedCount: c.flaggedCount,
      };
    }),
    findings: findings.map((f) => {
      const say = checkTexts(doc, f.checkKey, redact);
      return {
        id: f.id,
        summary: say(f.summary),
        statistic: f.statistic ? say(f.statistic) : null,
        threshold: f.threshold,
        assessment: f.assessment
          ? { category: f.assessment.category, impact: f.assessment.impact, action: f.assessment.action, rationale: redact(f.assessment.rationale), by: f.assessment.recordedByName, at: f.assessment.recordedAt }
          : null,
      };
    }),
    otherDeviations: deviations
      .filter((d) => d.finding === null && d.rerun?.id === primaryId)
      .map((d) => ({ id: d.id, category: d.category, impact: d.impact, action: d.action, rationale: redact(d.rationale), by: d.recordedByName, at: d.recordedAt })),
    comparison,
    signatures: signatures.map((s) => ({ name: s.signerName, meaning: s.meaning, at: s.signedAt })),
    appendix,
    caution: doc.caution,
  };
}

export type Report = Awaited<ReturnType<typeof getReport>>;

/** The latest exported appendix that holds this rerun, if any. */
async function latestAppendix(studyId: string, rerunId: string): Promise<{ exportedAt: string; sha256: string } | null> {
  const rows = await db
    .select({ exportedAt: t.appendices.exportedAt, sha256: t.appendices.sha256, rerunIdsJson: t.appendices.rerunIdsJson })
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
