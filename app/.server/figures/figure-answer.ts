/**
 * One figure answer of the figures route, as JSON text: { caution, spec, data }, the figure's
 * rows shaped from the stored result and its Vega-Lite compiled to Vega. Made on the web process
 * on request (figure-answers.server.ts) or in the compute thread with the result
 * (derive-page.ts); either way the web process checks it with the viewer's redaction before it
 * serves it. No database: the compute threads import it.
 */
import type { FigureKey } from "~/engine/checks";
import { figureData, figureSpec } from "~/figures/registry";
import type { FigureSource, FigureTable } from "~/figures/shared/source";
import { CAUTION } from "~/shared/caution";
import { toVega } from "./compile.server";

/** Where an answer is kept: by figure, covariate and whether its points name subjects. */
export function figureAnswerKey(
  figure: FigureKey,
  term: string | undefined,
  withSubjectIds: boolean,
): string {
  return JSON.stringify([figure, term ?? null, withSubjectIds]);
}

/** The answer's JSON. Throws FigureUnavailableError like figureData. */
export function figureAnswerBody(
  doc: FigureSource,
  figure: FigureKey,
  opts: { term?: string; withSubjectIds: boolean; table?: FigureTable },
): string {
  const data = figureData(doc, figure, opts);
  return JSON.stringify({
    caution: CAUTION,
    spec: toVega(figureSpec(data, { width: "container", height: "container", inlineRows: false })),
    data,
  });
}
