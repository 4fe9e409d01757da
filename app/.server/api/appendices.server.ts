/**
 * API: the study's exported Word appendices (metadata and hash) and their stored files, read
 * from the appendix store with the same rule as the appendix download page: people who may
 * read every rerun get every export; readers of published reports only exports whose reruns
 * are all published.
 */
import {
  appendixDownload,
  appendixIsPublished,
  findAppendix,
  listAppendices as storedAppendices,
} from "../appendix/appendix.server";
import { requireStudyForPrincipal } from "../study-access.server";
import { ApiError } from "./respond.server";
import type { AppendicesAnswer, Body } from "./schemas";
import type { ApiPrincipal } from "./tokens.server";

const NOT_PUBLISHED = "There is no such appendix export in this study.";

export async function listAppendices(
  p: ApiPrincipal,
  studyId: string,
): Promise<Body<typeof AppendicesAnswer>> {
  const { study, allowed } = await requireStudyForPrincipal(p, studyId, "report.view");
  const all = await storedAppendices(study.id);
  const shown = [];
  for (const a of all) if (allowed.has("rerun.view") || (await appendixIsPublished(a))) shown.push(a);
  return {
    appendices: shown.map((a) => ({
      id: a.id,
      planVersionId: a.planVersionId,
      rerunIds: a.rerunIds,
      sha256: a.sha256,
      byteSize: a.byteSize,
      exportedBy: a.exportedByName,
      exportedAt: a.exportedAt,
      download: `/api/v1/studies/${study.id}/appendices/${a.id}/file`,
    })),
  };
}

/** The exact stored .docx of one export (its SHA-256 checked by the store). */
export async function appendixFile(p: ApiPrincipal, studyId: string, appendixId: string): Promise<Response> {
  const { study, allowed } = await requireStudyForPrincipal(p, studyId, "report.view");
  const a = await findAppendix(study.id, { id: appendixId });
  // An export of an unpublished rerun does not exist for a reader who may see only published ones.
  if (!allowed.has("rerun.view") && !(await appendixIsPublished(a)))
    throw new ApiError("not_found", NOT_PUBLISHED);
  return appendixDownload(a, study.code);
}
