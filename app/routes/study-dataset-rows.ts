/**
 * Subject-level rows of a dataset version for the preview table, one window at a time,
 * optionally sorted by a column. Only roles that may see subject-level rows get an answer.
 */
import { data } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-dataset-rows";
import { readRowsWindow } from "~/.server/datasets/dataset-reads.server";
import { requireStudy } from "~/.server/study-access.server";

const Query = z.object({
  offset: z.coerce.number().int().min(0).default(0),
  limit: z.coerce.number().int().min(1).max(1000).default(200),
  sort: z.string().max(200).optional(),
  desc: z.enum(["0", "1"]).default("0"),
});

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "dataset.rows");
  const q = Query.safeParse(Object.fromEntries(new URL(request.url).searchParams));
  if (!q.success)
    throw data(
      { message: "Ask for rows with offset, limit (at most 1000), and optionally sort and desc." },
      { status: 400 },
    );
  const window = await readRowsWindow(study.id, params.versionId, {
    offset: q.data.offset,
    limit: q.data.limit,
    sort: q.data.sort ? { column: q.data.sort, descending: q.data.desc === "1" } : null,
  });
  if (!window) throw data({ message: "There is no such dataset version in this study." }, { status: 404 });
  return Response.json(window, { headers: { "Cache-Control": "private, no-store" } });
}
