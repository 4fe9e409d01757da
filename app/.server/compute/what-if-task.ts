/**
 * The what-if inputs of a rerun as a task for the compute threads: the rerun's rows from the
 * version's Arrow columns file (typed, as stored) and the refit that checks them
 * (`whatIfInputs`). No database.
 */
import type { WhatIfInputs } from "~/components/figures/what-if-inputs";
import type { TypedColumn } from "~/engine/data";
import { readArrowColumnsCached } from "../datasets/arrow-columns.server";
import type { RerunDocument } from "../reruns/compute-rerun";
import { rerunTable, whatIfInputs, type RerunTable, type WhatIfOptions } from "../reruns/what-if.server";

export interface WhatIfTaskInput {
  doc: RerunDocument;
  /** Absolute path of the locked version's Arrow columns file. */
  columnsFile: string;
  options: WhatIfOptions;
}

export async function whatIfTask(input: WhatIfTaskInput): Promise<WhatIfInputs> {
  const stored = await readArrowColumnsCached(input.columnsFile);
  const table: RerunTable<TypedColumn> = { columns: {}, rowNumbers: stored.rowNumbers };
  stored.names.forEach((name, i) => (table.columns[name] = stored.columns[i]));
  return whatIfInputs(input.doc, rerunTable(input.doc, table), input.options);
}
