/**
 * Single-record models (linear and generalized linear) analyse one row per subject. A long
 * dataset (a record per subject, parameter and visit) needs population conditions that leave
 * one; when a subject is still in two or more analysed rows the rerun is refused, naming the
 * subject and the columns whose values tell its records apart (for example a visit).
 */
import { EngineError } from "./errors";
import { cellText, type DataTable } from "./data";

/** Throws EngineError for the first subject found in more than one of the rows `used`. */
export function refuseRepeatedSubjects(table: DataTable, idColumn: string, used: ArrayLike<number>): void {
  const ids = table.columns[idColumn];
  const first = new Map<string, number>();
  for (let k = 0; k < used.length; k++) {
    const i = used[k];
    const id = cellText(ids, i).trim();
    if (id === "") continue;
    const seen = first.get(id);
    if (seen === undefined) {
      first.set(id, i);
      continue;
    }
    const rows: number[] = [];
    for (let m = 0; m < used.length; m++) if (cellText(ids, used[m]).trim() === id) rows.push(used[m]);
    const separating = table.names.filter(
      (name) =>
        name !== idColumn && new Set(rows.map((r) => cellText(table.columns[name], r).trim())).size > 1,
    );
    const shown = separating
      .slice(0, 4)
      .map(
        (name) =>
          `${name} (${[...new Set(rows.map((r) => cellText(table.columns[name], r).trim()))].slice(0, 4).join(", ")})`,
      );
    throw new EngineError(
      `subject "${id}" (${idColumn}) appears in ${rows.length} analysed rows, but this model analyses one row per subject: ` +
        (shown.length > 0
          ? `add population conditions on the columns that separate its records, ${shown.join(", ")}${separating.length > 4 ? ` and ${separating.length - 4} more` : ""}`
          : "its records are identical in every column; remove the duplicates from the dataset"),
    );
  }
}
