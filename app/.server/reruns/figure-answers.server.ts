/**
 * The figures route's answers, kept for completed reruns: a stored result never changes, so a
 * figure's JSON (data shaped from the result, specification compiled to Vega) is built once per
 * result hash, figure, covariate and viewer kind, then served from memory. Bounded by size.
 *
 * The answers of a results page's figures are made in the compute thread with the result and
 * stored beside it (derive-page.ts, part "figures"); an answer not there (a result stored
 * before, a figure the page does not show) is made here from the whole document. Either way an
 * answer for a viewer without subjects is checked for subject ids (the viewer's redaction) before
 * it is kept. A request that comes while an answer is being made waits for it rather than making
 * it again.
 */
import { LRUCache } from "lru-cache";
import type { FigureKey } from "~/engine/checks";
import { figureModule } from "~/figures/registry";
import type { FigureTable } from "~/figures/shared/source";
import { config } from "../config.server";
import { loadLockedTable } from "../datasets/catalog.server";
import { figureAnswerBody, figureAnswerKey } from "../figures/figure-answer";
import { redaction } from "../redaction.server";
import type { FiguresDerived } from "./derive-page";
import { readDerivedFile } from "./derived-files";
import type { ViewDocument } from "./page-document";
import type { RerunDocument } from "./reruns.server";
import { rerunTable } from "./what-if.server";

/** About 64 MB of answers (string length counts UTF-16 units; close enough for a bound). */
const answers = new LRUCache<string, string>({
  maxSize: 64 * 1024 * 1024,
  sizeCalculation: (body) => Math.max(1, body.length),
});
/** Answers being made, by the same key. */
const making = new Map<string, Promise<string>>();
/** The stored answers of a result, read once per result hash while its figures are asked for. */
const storedFigures = new LRUCache<string, Promise<FiguresDerived | null>>({ max: 8 });

export interface FigureRequest {
  rerunId: string;
  resultSha256: string | null;
  figure: FigureKey;
  term?: string;
  withSubjectIds: boolean;
}

/** The answers the compute thread stored beside the result (derive-page.ts), or null. */
function storedAnswers(resultSha256: string): Promise<FiguresDerived | null> {
  let kept = storedFigures.get(resultSha256);
  if (!kept) {
    kept = readDerivedFile<FiguresDerived>(config.DATA_DIR, resultSha256, "figures").catch(() => null);
    storedFigures.set(resultSha256, kept);
  }
  return kept;
}

/**
 * The JSON body { caution, spec, data } of one figure. `doc` is the result as the page reads it
 * (its subject ids are what the redaction looks for); `full` and `table` are asked for only when
 * the answer is neither kept nor stored (they parse the whole result and read the locked
 * dataset). Throws FigureUnavailableError like figureData.
 */
export async function figureAnswer(
  req: FigureRequest,
  doc: ViewDocument,
  full: () => Promise<RerunDocument>,
  table: (full: RerunDocument) => Promise<FigureTable | undefined>,
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
    const stored = req.resultSha256
      ? (await storedAnswers(req.resultSha256))?.[figureAnswerKey(req.figure, req.term, req.withSubjectIds)]
      : undefined;
    let body = stored;
    if (body === undefined) {
      const whole = await full();
      body = figureAnswerBody(whole, req.figure, {
        term: req.term,
        withSubjectIds: req.withSubjectIds,
        table: await table(whole),
      });
    }
    if (!req.withSubjectIds)
      redaction(false, [doc]).assertClean(JSON.parse(body) as unknown, `The ${req.figure} figure`);
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
  datasetVersionId: string,
): (doc: RerunDocument) => Promise<FigureTable | undefined> {
  return async (doc) =>
    figureModule(figure).needsTable
      ? rerunTable(doc, (await loadLockedTable(datasetVersionId)).table)
      : undefined;
}
