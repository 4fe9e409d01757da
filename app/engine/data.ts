/**
 * The data the engine reads: already-parsed cells as text, one array per column, plus the 1-based
 * data row number of each row in the source file (header excluded). Missing cells are empty,
 * `NA` or `.`.
 */
import { EngineError } from "./errors";

/** Rows as parsed from a CSV with a header: column name -> cell text. */
export type RowTable = readonly Readonly<Record<string, string>>[];

/** Columns of cell text, all of the same length. */
export interface ColumnTable {
  readonly columns: Readonly<Record<string, readonly string[]>>;
  /** Data row number (1-based, header excluded) of each row; defaults to 1..n. */
  readonly rowNumbers?: readonly number[];
}

export type TableInput = RowTable | ColumnTable;

/** A column table with its row count and row numbers resolved. */
export interface DataTable {
  readonly names: readonly string[];
  readonly columns: Readonly<Record<string, readonly string[]>>;
  readonly nRows: number;
  readonly rowNumbers: readonly number[];
}

function isColumnTable(input: TableInput): input is ColumnTable {
  return !Array.isArray(input);
}

/** Normalizes either table form to columns; checks that every column has the same length. */
export function toDataTable(input: TableInput): DataTable {
  if (isColumnTable(input)) {
    const names = Object.keys(input.columns);
    const nRows = names.length > 0 ? input.columns[names[0]].length : 0;
    for (const name of names) {
      if (input.columns[name].length !== nRows) {
        throw new EngineError(`column "${name}" has ${input.columns[name].length} cells, expected ${nRows}`);
      }
    }
    const rowNumbers = input.rowNumbers ?? Array.from({ length: nRows }, (_, i) => i + 1);
    if (rowNumbers.length !== nRows) throw new EngineError("row numbers do not match the number of rows");
    return { names, columns: input.columns, nRows, rowNumbers };
  }
  const rows = input as RowTable;
  const names: string[] = [];
  const seen = new Set<string>();
  for (const row of rows) {
    for (const key of Object.keys(row)) {
      if (!seen.has(key)) {
        seen.add(key);
        names.push(key);
      }
    }
  }
  const columns: Record<string, string[]> = {};
  for (const name of names) columns[name] = rows.map((row) => row[name] ?? "");
  return { names, columns, nRows: rows.length, rowNumbers: rows.map((_, i) => i + 1) };
}

/** True for the missing-value codes: empty cell, `NA` or `.` (surrounding spaces ignored). */
export function isMissingCell(cell: string | undefined): boolean {
  if (cell === undefined) return true;
  const t = cell.trim();
  return t === "" || t === "NA" || t === ".";
}

const NUMBER_PATTERN = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** The number a cell holds (decimal point, optional exponent), or null when it is not a number. */
export function parseNumber(cell: string): number | null {
  const t = cell.trim();
  if (!NUMBER_PATTERN.test(t)) return null;
  const v = Number(t);
  return Number.isFinite(v) ? v : null;
}

/** True when every non-missing cell of the column is a number. */
export function isNumericColumn(cells: readonly string[]): boolean {
  for (const cell of cells) {
    if (!isMissingCell(cell) && parseNumber(cell) === null) return false;
  }
  return true;
}

/** Compares two strings by Unicode code point (not UTF-16 unit). */
export function compareCodePoints(a: string, b: string): number {
  const ia = a[Symbol.iterator]();
  const ib = b[Symbol.iterator]();
  for (;;) {
    const ca = ia.next();
    const cb = ib.next();
    if (ca.done || cb.done) return ca.done && cb.done ? 0 : ca.done ? -1 : 1;
    const da = ca.value.codePointAt(0) as number;
    const db = cb.value.codePointAt(0) as number;
    if (da !== db) return da - db;
  }
}

/**
 * Orders level labels: numeric order when every label is a number, otherwise code-point order.
 */
export function orderLevels(labels: Iterable<string>): string[] {
  const unique = [...new Set(labels)];
  const numbers = unique.map((l) => parseNumber(l));
  if (numbers.every((v) => v !== null)) {
    const pairs = unique.map((label, i) => ({ label, value: numbers[i] as number }));
    pairs.sort((a, b) => a.value - b.value || compareCodePoints(a.label, b.label));
    return pairs.map((p) => p.label);
  }
  return unique.sort(compareCodePoints);
}
