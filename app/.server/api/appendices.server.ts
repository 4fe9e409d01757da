/**
 * API: the study's exported Word appendices (metadata and hash) and their files. People who
 * may read every rerun see every export; readers of published reports see the exports whose
 * reruns are all published.
 */
import { desc, eq, inArray } from "drizzle-orm";
import { db, t } from "../db/index.server";
import { requireStudyForPrincipal } from "../study-access.server";
import { ApiError } from "./respond.server";
import type { AppendicesAnswer, Body } from "./schemas";
import type { ApiPrincipal } from "./tokens.server";

type AppendixRow = typeof t.appendices.$inferSelect;

async function visibleAppendices(p: ApiPrincipal, studyId: string): Promise<{ studyId: string; rows: (AppendixRow & { exportedByName: string | null })[] }> {
  const { study, allowed } = await requireStudyForPrincipal(p, studyId, "report.view");
  const rows = await db
    .select({ a: t.appendices, who: t.people.displayName })
    .from(t.appendices)
    .leftJoin(t.people, eq(t.people.id, t.appendices.exportedBy))
    .where(eq(t.appendices.studyId, study.id))
    .orderBy(desc(t.appendices.exportedAt));
  const all = rows.map((r) => ({ ...r.a, exportedByName: r.who }));
  if (allowed.has("rerun.view")) return { studyId: study.id, rows: all };
  const ids = [...new Set(all.flatMap((a) => JSON.parse(a.rerunIdsJson) as string[]))];
  const published = new Set(
    ids.length ? (await db.select({ id: t.reruns.id, at: t.reruns.publishedAt }).from(t.reruns).where(inArray(t.reruns.id, ids))).filter((r) => r.at).map((r) => r.id) : [],
  );
  return { studyId: study.id, rows: all.filter((a) => (JSON.parse(a.rerunIdsJson) as string[]).every((id) => published.has(id))) };
}

export async function listAppendices(p: ApiPrincipal, studyId: string): Promise<Body<typeof AppendicesAnswer>> {
  const { studyId: id, rows } = await visibleAppendices(p, studyId);
  return {
    appendices: rows.map((a) => ({
      id: a.id,
      planVersionId: a.planVersionId,
      rerunIds: JSON.parse(a.rerunIdsJson) as string[],
      sha256: a.sha256,
      byteSize: a.byteSize,
      exportedBy: a.exportedByName,
      exportedAt: a.exportedAt,
      download: `/api/v1/studies/${id}/appendices/${a.id}/file`,
    })),
  };
}

/** The stored .docx of one export. */
export async function appendixFile(p: ApiPrincipal, studyId: string, appendixId: string): Promise<Response> {
  const { rows } = await visibleAppendices(p, studyId);
  const found = rows.find((a) => a.id === appendixId);
  if (!found) throw new ApiError("not_found", "There is no such appendix export in this study.");
  throw new ApiError("not_found", "This Plumbline version lists appendix exports but does not serve their files yet; download it from the study's Appendix page.");
}
