/**
 * The figures route's answers, kept for completed reruns: a stored result never changes, so a
 * figure's JSON (data shaped from the result, specification compiled to Vega) is built once per
 * result hash, figure, covariate and viewer kind, then served from memory. Bounded by size. An
 * answer for a viewer without subjects is checked for subject ids before it is kept. A rerun's
 * answers are made when it completes (results-prewarm.server.ts); a request that comes while one
 * is being made waits for it rather than making it again.
 */
import { LRUCache } from "lru-cache";
import { CAUTION } from "~/shared/caution";
import { figureData, figureModule, figureSpec } from "~/figures/registry";
import type { FigureTable } from "~/figures/shared/source";
import type { FigureKey } from "~/engine/checks";
import { loadLockedTable } from "../datasets/catalog.server";
import { toVega } from "../figures/compile.server";
import { redaction } from "../redaction.server";
import type { RerunDocument } from "./reruns.server";
import { rerunTable } from "./what-if.server";

/** About 64 MB of answers (string length counts UTF-16 units; close enough for a bound). */
const answers = new LRUCache<string, string>({
  maxSize: 64 * 1024 * 1024,
  sizeCalculation: (body) => Math.max(1, body.length),
});
/** Answers being made, by the same key. */
const making = new Map<string, Promise<string>>();

export interface FigureRequest {
  rerunId: string;
  resultSha256: string | null;
  figure: FigureKey;
  term?: string;
  withSubjectIds: boolean;
}

/**
 * The JSON body { caution, spec, data } of one figure. `table` is asked for only when the answer
 * is not kept yet (it reads the locked dataset). Throws FigureUnavailableError like figureData.
 */
export async function figureAnswer(
  req: FigureRequest,
  doc: RerunDocument,
  table: () => Promise<FigureTable | undefined>,
): Promise<string> {
  const key = JSON.stringify([
    req.rerunId,
    req.resultSha256,
    req.figure,
    req.term ?? null,
    req.withSubjectIds,
  ]);
  const kept = answers.get(key) ?? making.get(key);
  if (kept) return kept;
  const made = (async () => {
    const data = figureData(doc, req.figure, {
      term: req.term,
      withSubjectIds: req.withSubjectIds,
      table: await table(),
    });
    const answer = {
      caution: CAUTION,
      spec: toVega(figureSpec(data, { width: "container", height: "container", inlineRows: false })),
      data,
    };
    redaction(req.withSubjectIds, [doc]).assertClean(answer, `The ${req.figure} figure`);
    const body = JSON.stringify(answer);
    answers.set(key, body);
    return body;
  })();
  making.set(key, made);
  try {
    return await made;
  } finally {
    making.delete(key);
  }
}

/** The rows a figure plots beside the result (covariate values, arms), read from the locked dataset; none for the others. */
export function figureTableOf(
  figure: FigureKey,
  doc: RerunDocument,
  datasetVersionId: string,
): () => Promise<FigureTable | undefined> {
  return async () =>
    figureModule(figure).needsTable
      ? rerunTable(doc, (await loadLockedTable(datasetVersionId)).table)
      : undefined;
}
