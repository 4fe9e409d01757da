import { z } from "zod";
import type { Route } from "./+types/study-appendix-download";
import { appendixDownload, appendixIsPublished, findAppendix } from "~/.server/appendix/appendix.server";
import { requireStudy } from "~/.server/study-access.server";

const Query = z.union([z.object({ id: z.string().min(1) }), z.object({ rerun: z.string().min(1) })]);

/**
 * A stored Word appendix (?id=) or the newest one containing a rerun (?rerun=), exactly the bytes
 * recorded with its SHA-256. Medical writers, biostatisticians and the sponsor readers of a
 * published rerun may download it; it never holds subject-level rows.
 */
export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, allowed } = await requireStudy(request, params.studyId, "report.view");
  const url = new URL(request.url);
  const q = Query.safeParse(Object.fromEntries(url.searchParams));
  if (!q.success)
    throw Response.json({ message: "Name the appendix with ?id=APPENDIX or ?rerun=RERUN." }, { status: 400 });
  const a = await findAppendix(study.id, "id" in q.data ? { id: q.data.id } : { rerunId: q.data.rerun });
  if (!allowed.has("rerun.view") && !(await appendixIsPublished(a))) {
    throw Response.json(
      { message: "This appendix covers a rerun that is not published to sponsor readers." },
      { status: 404 },
    );
  }
  return appendixDownload(a, study.code);
}
