/**
 * API: the study's deviation log. People who may read the log (deviation.view) get all of it;
 * readers of published reports get the deviations of published reruns only. Subject
 * identifiers are given only to people who see subjects (`seesSubjects`, redaction.server.ts).
 */
import { inArray } from "drizzle-orm";
import { db, t } from "../db/index.server";
import { deviationLog } from "../reruns/findings.server";
import { requireStudyForPrincipal } from "../study-access.server";
import { seesSubjects } from "../permissions.server";
import { redactionForReruns } from "../redaction.server";
import type { Body, DeviationsAnswer } from "./schemas";
import type { ApiPrincipal } from "./tokens.server";

export async function listDeviations(
  p: ApiPrincipal,
  studyId: string,
): Promise<Body<typeof DeviationsAnswer>> {
  const access = await requireStudyForPrincipal(p, studyId, "report.view");
  const { study, allowed } = access;
  const everything = allowed.has("deviation.view");
  const log = await deviationLog(study.id);
  const rerunIds = [...new Set(log.flatMap((d) => (d.rerun ? [d.rerun.id] : [])))];
  const reruns = rerunIds.length
    ? await db
        .select({ id: t.reruns.id, publishedAt: t.reruns.publishedAt })
        .from(t.reruns)
        .where(inArray(t.reruns.id, rerunIds))
    : [];
  const published = new Set(reruns.filter((r) => r.publishedAt !== null).map((r) => r.id));
  const shown = log.filter((d) => everything || (d.rerun !== null && published.has(d.rerun.id)));
  const redact = await redactionForReruns(
    seesSubjects(access),
    shown.flatMap((d) => (d.rerun ? [d.rerun.id] : [])),
  );
  const txt = (s: string, key?: string | null) => redact.text(s, key);
  const body: Body<typeof DeviationsAnswer> = {
    deviations: shown.map((d) => ({
      id: d.id,
      category: d.category,
      impact: d.impact,
      action: d.action,
      rationale: txt(d.rationale, d.finding?.checkKey),
      recordedBy: d.recordedByName,
      recordedAt: d.recordedAt,
      rerun: d.rerun
        ? {
            id: d.rerun.id,
            label: d.rerun.label === null ? null : txt(d.rerun.label),
            signedAt: d.rerun.signedAt,
          }
        : null,
      plannedModel: d.model,
      finding: d.finding
        ? {
            id: d.finding.id,
            checkKey: d.finding.checkKey,
            summary: txt(d.finding.summary, d.finding.checkKey),
            statistic: d.finding.statistic === null ? null : txt(d.finding.statistic, d.finding.checkKey),
            threshold: d.finding.threshold,
          }
        : null,
    })),
  };
  return redact.assertClean(body, "A deviation log");
}
