/**
 * Reads an uploaded dataset file (CSV, CDISC Dataset-JSON v1.1 in JSON or NDJSON form, or
 * XPORT version 5) from disk into columns of cell text, and checks it. The reading itself is
 * shared with the headless command (app/engine-io/dataset/); this adds the server's limits,
 * the key and the column summaries. Every problem names the file, the column and the row, and
 * says what to do; a file with any problem is refused whole.
 */
import { config } from "../config.server";
import { DEFAULT_LIMITS, type ReadLimits } from "../../engine-io/dataset/limits";
import {
  firstBytesOf,
  formatOf,
  readDatasetFile,
  type ColumnReadMeta,
  type DatasetFormat,
  type ReadOptions,
  type ReadOutcome,
  type ReadTable,
} from "../../engine-io/dataset/read";
import { summaryType } from "../../engine-io/dataset/typing";
import { summariseColumn, type ColumnMeta } from "./column-summary";
import { findKey } from "./keys";

export { detectDelimiter } from "../../engine-io/dataset/csv";
export { MAX_PROBLEMS, Problems } from "../../engine-io/dataset/problems";
export { formatOf, firstBytesOf };
export type { DatasetFormat };

/** Longest cell accepted, in characters. */
export const MAX_CELL_CHARS = DEFAULT_LIMITS.maxCellChars;

export interface ParseOptions {
  /** Key columns the uploader names; the file's declared key, or else a detected one, when absent or empty. */
  keyColumns?: string[];
  /** CSV columns the uploader declares numeric (Dataset-JSON and XPORT declare their own types). */
  numericColumns?: string[];
  /** Dataset-JSON columns to read by their values rather than their declared type. */
  readByValues?: string[];
  onProgress?: (fraction: number) => void;
}

/**
 * A column's stored metadata: its summary plus what the file said about it. The added fields
 * (see ColumnReadMeta: valueType, declaredType, format, length, precision, decimalComma,
 * readByValues, warnings) are all optional for versions stored before they existed.
 */
export type ParsedColumnMeta = ColumnMeta & Partial<ColumnReadMeta>;

export interface ParsedDataset {
  format: DatasetFormat;
  names: string[];
  cells: string[][];
  rowNumbers: number[];
  columns: ParsedColumnMeta[];
  keyColumns: string[];
  /** Dataset label the file declares (Dataset-JSON, XPORT), if any. */
  datasetLabel?: string | null;
  /** Where the key came from. */
  keySource?: "uploader" | "file" | "detected";
}

export type ParseOutcome = { ok: true; dataset: ParsedDataset } | { ok: false; problems: string[] };

/** The reading limits the server is configured with. */
export function serverLimits(): ReadLimits {
  return {
    ...DEFAULT_LIMITS,
    maxColumns: config.DATASET_MAX_COLUMNS,
    maxHeaderBytes: config.DATASET_MAX_HEADER_BYTES,
  };
}

function readOptions(options: ParseOptions): ReadOptions {
  return {
    numericColumns: options.numericColumns,
    readByValues: options.readByValues,
    onProgress: options.onProgress,
    limits: serverLimits(),
  };
}

/** Adds the key and the column summaries to what a reader gave back. */
function finish(file: string, read: ReadOutcome, options: ParseOptions): ParseOutcome {
  if (!read.ok) return read;
  const table: ReadTable = read.table;
  const named = options.keyColumns && options.keyColumns.length > 0 ? options.keyColumns : null;
  const keySource = named ? "uploader" : table.declaredKey ? "file" : "detected";
  const key = findKey(
    file,
    table.names,
    table.cells,
    table.rowNumbers,
    named ?? table.declaredKey,
    keySource === "file",
  );
  if (!key.ok) return { ok: false, problems: key.problems };
  const columns = table.columns.map((c, j): ParsedColumnMeta => {
    const { name, label, ...read } = c;
    return { ...summariseColumn(name, label, summaryType(c.valueType), table.cells[j]), ...read };
  });
  return {
    ok: true,
    dataset: {
      format: table.format,
      names: table.names,
      cells: table.cells,
      rowNumbers: table.rowNumbers,
      columns,
      keyColumns: key.columns,
      datasetLabel: table.datasetLabel,
      keySource,
    },
  };
}

/** Any unexpected failure of a reader becomes a refusal naming the file (so an audited refusal, never a 500). */
async function guarded(fileName: string, read: () => Promise<ReadOutcome>): Promise<ReadOutcome> {
  try {
    return await read();
  } catch (e) {
    console.error(e);
    return {
      ok: false,
      problems: [
        `${fileName} could not be read (${e instanceof Error ? e.message : String(e)}). Check that it is a CSV, Dataset-JSON v1.1 or XPORT file and upload it again.`,
      ],
    };
  }
}

/** Reads and checks a CSV file. */
export function parseCsv(
  filePath: string,
  fileName: string,
  options: ParseOptions = {},
): Promise<ParseOutcome> {
  return parseDatasetFile(filePath, fileName, "csv", options);
}

/** Reads and checks a CDISC Dataset-JSON v1.1 file (JSON or NDJSON form). */
export function parseDatasetJson(
  filePath: string,
  fileName: string,
  options: ParseOptions = {},
): Promise<ParseOutcome> {
  return parseDatasetFile(filePath, fileName, "dataset-json", options);
}

export async function parseDatasetFile(
  filePath: string,
  fileName: string,
  format: DatasetFormat,
  options: ParseOptions = {},
): Promise<ParseOutcome> {
  if (format !== "dataset-json" && (options.readByValues?.length ?? 0) > 0) {
    return {
      ok: false,
      problems: [
        `${fileName}: reading columns by their values applies to Dataset-JSON files, whose columns declare a data type; ${format === "csv" ? "CSV" : "XPORT"} columns are read by their values already. Leave "Read by their values" empty.`,
      ],
    };
  }
  const read = await guarded(fileName, () =>
    readDatasetFile(filePath, fileName, format, readOptions(options)),
  );
  return finish(fileName, read, options);
}
