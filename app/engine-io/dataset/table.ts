/**
 * What every dataset reader (CSV, Dataset-JSON, XPORT) gives back: the columns as cell text
 * (missing as ""), the row numbers, and what the file says about each column. Pure data; the
 * web server adds summaries and the key (app/.server/datasets/parse.server.ts), the headless
 * command prints it (app/cli.ts).
 */
import type { ReadLimits } from "./limits";
import type { Problems } from "./problems";

export type DatasetFormat = "csv" | "dataset-json" | "xpt";

/** The type of a column's values as read. */
export type ValueType = "number" | "integer" | "text" | "date" | "datetime" | "time";

/** How precise ISO 8601 date and datetime values are (partial values are allowed). */
export type DatePrecision = "year" | "month" | "day" | "hour" | "minute" | "second";

/** What a reader found out about one column, beyond its cells. */
export interface ColumnReadMeta {
  /** The type of its values as read. */
  valueType: ValueType;
  /** The type the file declares (Dataset-JSON dataType, XPORT Num or Char, CSV "number" when the uploader declared it). */
  declaredType?: string;
  /** Display format the file names, e.g. DATE9. (XPORT format, Dataset-JSON displayFormat). */
  format?: string;
  /** Declared length (XPORT, Dataset-JSON). */
  length?: number;
  /** Date and datetime columns: how many values have each precision (e.g. { year: 3, day: 251 }). */
  precision?: Partial<Record<DatePrecision, number>>;
  /** CSV with semicolons: the column's decimal commas were read as decimal points. */
  decimalComma?: true;
  /** The data manager chose to read this column by its values rather than its declared type. */
  readByValues?: true;
  /** Things the data manager should know (e.g. a few text cells in a column of numbers). */
  warnings?: string[];
}

export interface ReadColumn extends ColumnReadMeta {
  name: string;
  label: string | null;
}

export interface ReadTable {
  format: DatasetFormat;
  /** Dataset name and label the file declares (Dataset-JSON, XPORT); null for CSV. */
  datasetName: string | null;
  datasetLabel: string | null;
  names: string[];
  /** cells[column][row], missing as "". */
  cells: string[][];
  /** 1-based data rows. */
  rowNumbers: number[];
  columns: ReadColumn[];
  /** The key the file declares (Dataset-JSON keySequence), in order; null when it declares none. */
  declaredKey: string[] | null;
}

export type ReadOutcome = { ok: true; table: ReadTable } | { ok: false; problems: string[] };

export interface ReadOptions {
  /** CSV columns the uploader declares numeric (Dataset-JSON and XPORT declare their own types). */
  numericColumns?: string[];
  /** Columns to read by their values rather than their declared type (Dataset-JSON). */
  readByValues?: string[];
  limits?: Partial<ReadLimits>;
  onProgress?: (fraction: number) => void;
}

/**
 * A column name without surrounding spaces. Not String.prototype.trim, which also removes a
 * byte-order mark (U+FEFF) and would hide a file that starts with two of them.
 */
export function trimName(name: string): string {
  return name.replace(/^[ \t\r\n]+|[ \t\r\n]+$/g, "");
}

/**
 * Checks column names: present, not too long, free of byte-order marks and control characters,
 * and unique without regard to case (analysis software treats AGE and age as one column).
 */
export function checkNames(file: string, names: string[], limits: ReadLimits, problems: Problems): void {
  if (names.length > limits.maxColumns) {
    problems.add(
      `${file} has ${names.length.toLocaleString("en-US")} columns; the limit is ${limits.maxColumns.toLocaleString("en-US")}. Upload only the columns the analysis needs, or ask an administrator to raise DATASET_MAX_COLUMNS.`,
    );
    return;
  }
  const seen = new Map<string, number>();
  names.forEach((name, i) => {
    const shown = name.length > 40 ? `${name.slice(0, 40)}…` : name;
    if (name === "") {
      problems.add(`${file}: column ${i + 1} has no name in the header row. Give every column a name.`);
      return;
    }
    if (name.includes("\uFEFF")) {
      problems.add(
        `${file}: the name of column ${i + 1} holds a byte-order mark (U+FEFF)${i === 0 ? ": the file starts with two byte-order marks" : ""}. Save the file again as UTF-8 with at most one byte-order mark.`,
      );
      return;
    }
    if (/[\u0000-\u001f\u007f]/.test(name)) {
      problems.add(
        `${file}: the name of column ${i + 1} ("${shown.replace(/[\u0000-\u001f\u007f]/g, "?")}") holds a control character. Rename the column.`,
      );
      return;
    }
    if (name.length > limits.maxNameChars) {
      problems.add(
        `${file}: the name of column ${i + 1} ("${shown}") has ${name.length.toLocaleString("en-US")} characters; the limit is ${limits.maxNameChars}. Give it a shorter name.`,
      );
      return;
    }
    const folded = name.toLowerCase();
    const first = seen.get(folded);
    if (first === undefined) seen.set(folded, i);
    else if (names[first] === name)
      problems.add(
        `${file}: the column name "${name}" is used twice (columns ${first + 1} and ${i + 1}). Column names must be unique.`,
      );
    else
      problems.add(
        `${file}: the column names "${names[first]}" (column ${first + 1}) and "${name}" (column ${i + 1}) differ only in upper and lower case. Column names must be unique regardless of case; rename one.`,
      );
  });
}

/** Checks one cell's length and characters. */
export function checkCell(
  file: string,
  column: string,
  row: number,
  cell: string,
  limits: ReadLimits,
  problems: Problems,
): void {
  if (cell.length > limits.maxCellChars) {
    problems.add(
      `${file}: column "${column}", row ${row}: the cell has ${cell.length} characters; the limit is ${limits.maxCellChars}. Shorten it or leave free text out of the analysis dataset.`,
    );
  }
  if (cell.includes("\u0000"))
    problems.add(
      `${file}: column "${column}", row ${row}: the cell contains a NUL character (U+0000). Remove it and upload again.`,
    );
}
