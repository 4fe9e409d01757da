/**
 * The figures route's answers, kept for completed reruns: a stored result never changes, so a
 * figure's JSON (data shaped from the result, specification compiled to Vega) is built once per
 * result hash, figure, covariate and viewer kind, then served from memory. Bounded by size. An
 * answer for a viewer without subjects is checked for subject ids before it is kept.
 */
import { LRUCache } from "lru-cache";
import { CAUTION } from "~/shared/caution";
import { figureData, figureSpec } from "~/figures/registry";
import type { FigureTable } from "~/figures/shared/source";
import type { FigureKey } from "~/engine/checks";
import { toVega } from "../figures/compile.server";
import { redaction } from "../redaction.server";
import type { RerunDocument } from "./reruns.server";

/** About 64 MB of answers (string length counts UTF-16 units; close enough for a bound). */
const answers = new LRUCache<string, string>({
  maxSize: 64 * 1024 * 1024,
  sizeCalculation: (body) => Math.max(1, body.length),
});

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
  const kept = answers.get(key);
  if (kept) return kept;
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
}
