/**
 * The data and Vega-Lite specification of one diagnostic figure of a rerun, fetched by the
 * results page after it paints: GET /studies/:studyId/reruns/:rerunId/figures/:figure?term=NAME.
 * Answers JSON { caution, spec, data }: the spec is the figure's Vega-Lite compiled to Vega, and
 * reads its rows from the dataset named "rows" (data.rows), so they travel once. Answers for a
 * completed rerun are kept in memory (figure-answers.server.ts). Points carry their subject and
 * data row only for people who see subjects; never stored by a cache.
 */
import { z } from "zod";
import type { Route } from "./+types/study-rerun-figures";
import { CAUTION } from "~/shared/caution";
import { FIGURE_KEYS } from "~/figures/registry";
import { FigureUnavailableError } from "~/figures/shared/source";
import { figureAnswer, figureTableOf } from "~/.server/reruns/figure-answers.server";
import { getRerunPage, storedRerunDocument } from "~/.server/reruns/rerun-rows.server";
import { seesSubjects } from "~/.server/permissions.server";
import { requireStudy } from "~/.server/study-access.server";
import type { FigureKey } from "~/engine/checks";

const figureSchema = z.enum(FIGURE_KEYS as [FigureKey, ...FigureKey[]]);

const headers = { "Cache-Control": "private, no-store" };

function refuse(status: number, message: string): Response {
  return Response.json({ caution: CAUTION, message }, { status, headers });
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireStudy(request, params.studyId, "rerun.view");
  const figure = figureSchema.safeParse(params.figure);
  if (!figure.success)
    return refuse(404, `There is no figure "${params.figure}". Figures: ${FIGURE_KEYS.join(", ")}.`);
  const term = new URL(request.url).searchParams.get("term") ?? undefined;
  // the result as its page reads it; the whole document only when an answer must be made here
  const { rerun, doc } = await getRerunPage(params.studyId, params.rerunId);
  if (!doc)
    return refuse(
      409,
      rerun.status === "failed"
        ? `This rerun failed (${rerun.failureReason ?? "no reason recorded"}); it has no figures.`
        : "This rerun has not finished yet; its figures appear when it completes.",
    );
  try {
    // who each point is, only for people who may see subjects (the one decision, permissions.server.ts)
    const body = await figureAnswer(
      {
        rerunId: rerun.id,
        resultSha256: rerun.resultSha256,
        figure: figure.data,
        term,
        withSubjectIds: seesSubjects(access),
      },
      doc,
      async () => {
        const whole = await storedRerunDocument(rerun);
        if (!whole) throw new Error(`The stored result of rerun ${rerun.id} could not be read.`);
        return whole;
      },
      // figures that plot covariate values or arms read the rerun's rows from the locked dataset
      figureTableOf(figure.data, rerun.datasetVersionId),
    );
    return new Response(body, { headers: { ...headers, "Content-Type": "application/json; charset=utf-8" } });
  } catch (e) {
    if (e instanceof FigureUnavailableError) return refuse(400, `This figure cannot be drawn: ${e.message}.`);
    throw e;
  }
}
