/**
 * What a results page reads of a completed rerun, made in the compute thread with its result and
 * stored beside it (`derived-files.ts`, part "page"): the page document (`page-document.ts`) and
 * the what-if inputs, refit from the rows the thread already holds. The what-if inputs are made
 * once, naming subjects; `whatIfFor` (what-if.server.ts) shapes them for each viewer, and the page
 * answer still goes through the viewer's redaction. No database: the compute threads import it.
 */
import type { WhatIfInputs } from "~/components/figures/what-if-inputs";
import type { RerunDocument, RerunTable } from "./compute-rerun";
import { writeDerivedFile } from "./derived-files";
import { pageDocumentOf, type ViewDocument } from "./page-document";
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
  } catch (e) {
    console.error(`The page data of result ${resultSha256} was not stored: ${String(e)}`);
  }
}
