/**
 * What a results page reads of a completed rerun, made in the compute thread with its result and
 * stored beside it (`derived-files.ts`): the page document (`page-document.ts`) and the what-if
 * inputs, refit from the rows the thread already holds (part "page"), and the answers of the
 * page's figures (part "figures"). An answer is made with and without subject ids; the web
 * process checks the one it serves with the viewer's redaction (figure-answers.server.ts). The what-if inputs are made
 * once, naming subjects; `whatIfFor` (what-if.server.ts) shapes them for each viewer, and the page
 * answer still goes through the viewer's redaction. No database: the compute threads import it.
 */
import type { WhatIfInputs } from "~/components/figures/what-if-inputs";
import { modelPageFigures } from "~/components/rerun/model-page-figures";
import { figureModule } from "~/figures/registry";
import { FigureUnavailableError, type FigureTable } from "~/figures/shared/source";
import { textOf } from "../datasets/arrow-columns.server";
import { figureAnswerBody, figureAnswerKey } from "../figures/figure-answer";
import { IDENTITY } from "../redaction-identity";
import type { RerunDocument, RerunTable } from "./compute-rerun";
import { writeDerivedFile } from "./derived-files";
import { pageDocumentOf, type ViewDocument } from "./page-document";
import { rerunView } from "./rerun-view.server";
import { rerunTable, whatIfInputs } from "./what-if.server";

export interface PageDerived {
  /** Null for the kinds whose page reads the whole document. */
  page: ViewDocument | null;
  /** As made for a viewer who sees subjects and may start reruns (`whatIfFor` shapes them). */
  whatIf: WhatIfInputs;
}

export function derivePage(doc: RerunDocument, table: RerunTable): PageDerived {
  return {
    page: pageDocumentOf(doc),
    whatIf: whatIfInputs(doc, rerunTable(doc, table), { withSubjectIds: true, canSave: true }),
  };
}

/** Figure answers by `figureAnswerKey`: JSON text, not yet checked for any viewer. */
export type FiguresDerived = Record<string, string>;

/**
 * The answers of the figures a linear model's or GLM's results page shows, each with and without
 * subject ids (none for the other kinds). A figure that cannot be drawn is left out: the route
 * then makes it, and says why.
 */
export function deriveFigures(doc: RerunDocument, table: RerunTable): FiguresDerived {
  const view = rerunView(doc, IDENTITY);
  if (view.kind !== "linear" && view.kind !== "glm") return {};
  // the rows as cell text, as the web process reads them (catalog.server.ts), made when a figure asks
  let rows: FigureTable | undefined;
  const rowsOf = (): FigureTable => {
    if (!rows) {
      const columns: Record<string, string[]> = {};
      for (const [name, column] of Object.entries(table.columns))
        Object.defineProperty(columns, name, { enumerable: true, get: () => textOf(column) });
      rows = rerunTable(doc, { columns, rowNumbers: table.rowNumbers });
    }
    return rows;
  };
  const out: FiguresDerived = {};
  for (const { figure, term } of modelPageFigures(view)) {
    for (const withSubjectIds of [true, false]) {
      const key = figureAnswerKey(figure, term, withSubjectIds);
      if (key in out) continue;
      try {
        const t = figureModule(figure).needsTable ? rowsOf() : undefined;
        out[key] = figureAnswerBody(doc, figure, { term, withSubjectIds, table: t });
      } catch (e) {
        if (!(e instanceof FigureUnavailableError)) throw e;
      }
    }
  }
  return out;
}

/**
 * Derives and stores the page part of a result just written. A failure is reported and left: the
 * page then derives what it needs from the result itself, as for results stored before.
 */
export async function storePageDerived(
  dataDir: string,
  resultSha256: string,
  doc: RerunDocument,
  table: RerunTable,
): Promise<void> {
  try {
    await writeDerivedFile(dataDir, resultSha256, "page", derivePage(doc, table));
    // the figures of a planned analysis (its page is the one opened as it completes; making them
    // takes about half the rerun's own time at 10 000 subjects): a sensitivity analysis's page
    // makes them on request
    if (doc.options.variant === "planned")
      await writeDerivedFile(dataDir, resultSha256, "figures", deriveFigures(doc, table));
  } catch (e) {
    console.error(`The page data of result ${resultSha256} was not stored: ${String(e)}`);
  }
}
