/**
 * A stored rerun as its results page reads it: the document without the per-observation arrays
 * of a linear model or GLM (fitted values, residuals, leverage, DFBETAS, partial residuals: 97 %
 * of a 10 000-subject result's 5 MB), keeping the subject ids the redaction looks for. The
 * compute thread makes it with the result and stores it beside it (`derived-files.ts`), so the
 * first load of a large result's page reads a few hundred kB instead of parsing the whole
 * document on the web process. Cox and repeated-measures documents are read whole (they have
 * no page document yet). Pure: the compute threads import it.
 */
import type { RerunDocument } from "./compute-rerun";

type Result = RerunDocument["result"];

/** A linear model's or GLM's result with only the ids of its observations; the other kinds as they are. */
export type ViewResult<R extends Result = Result> = R extends { kind: "linear" | "glm" }
  ? Omit<R, "observations"> & { observations: Pick<R["observations"], "id"> }
  : R;

/** What the results page reads of a rerun: a whole document, or its page document. */
export type ViewDocument = Omit<RerunDocument, "result"> & { result: ViewResult };

/** The page document of a linear model's or GLM's result; null for the kinds read whole. */
export function pageDocumentOf(doc: RerunDocument): ViewDocument | null {
  const r = doc.result;
  if (r.kind !== "linear" && r.kind !== "glm") return null;
  const { observations, ...rest } = r;
  return { ...doc, result: { ...rest, observations: { id: observations.id } } as ViewResult };
}
