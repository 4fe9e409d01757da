/**
 * A parsed upload as the typed columns the store keeps (arrow-columns.server.ts). No database:
 * the compute threads that read uploads (`upload-task.ts`) import it.
 */
import { typedColumnOf, type StoredColumns } from "./arrow-columns.server";

/** What a parse gives: names, cell text, row numbers, column metadata, and dataset-level facts besides. */
export interface ParsedForStore {
  names: string[];
  cells: string[][];
  rowNumbers: number[];
  columns: readonly object[];
}

/**
 * The typed columns of a parsed file: numbers as Float64Array, text as strings (see
 * arrow-columns.server.ts). Every field of the parse other than the columns themselves (source
 * format, key columns, dataset label, ...) is kept as dataset metadata.
 */
export function storedColumnsFromParsed<P extends ParsedForStore>(parsed: P): StoredColumns {
  const { names, cells, rowNumbers, columns, ...dataset } = parsed;
  const columnMeta = names.map((name, j) => ({
    ...(columns[j] as Record<string, unknown> | undefined),
    name,
  }));
  return {
    names,
    columns: cells.map((c, j) => typedColumnOf(c, columnMeta[j])),
    rowNumbers,
    columnMeta,
    dataset: dataset as Record<string, unknown>,
  };
}
