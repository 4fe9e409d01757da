/**
 * Reads an uploaded dataset file (CSV or CDISC Dataset-JSON v1.1) from disk into columns of
 * cell text, and checks it. Every problem names the file, the column and the row, and says
 * what to do; a file with any problem is refused whole.
 *
 * CSV goes through csv-parse as a stream (RFC 4180 quoting; comma, semicolon or tab detected
 * from the header line; UTF-8 with or without a byte-order mark, checked strictly).
 */
import { createReadStream } from "node:fs";
import { readFile, stat } from "node:fs/promises";
import { isUtf8 } from "node:buffer";
import { parse as csvParser } from "csv-parse";
import { isMissingCell, parseNumber } from "../../engine/data";
import { CELL_SEPARATOR } from "./columns-file.server";
import { inferType, isIsoDate, isIsoDateTime, summariseColumn, type ColumnMeta, type ColumnType } from "./column-summary";
import { findKey } from "./keys";

export type DatasetFormat = "csv" | "dataset-json";

/** Longest cell accepted, in characters. */
export const MAX_CELL_CHARS = 10_000;
/** At most this many problems are listed; the count of the rest is given. */
export const MAX_PROBLEMS = 20;

export interface ParseOptions {
  /** Key columns the uploader names; detected when absent. */
  keyColumns?: string[];
  /** CSV columns the uploader declares numeric (Dataset-JSON declares its own types). */
  numericColumns?: string[];
  onProgress?: (fraction: number) => void;
}

export interface ParsedDataset {
  format: DatasetFormat;
  names: string[];
  cells: string[][];
  rowNumbers: number[];
  columns: ColumnMeta[];
  keyColumns: string[];
}

export type ParseOutcome = { ok: true; dataset: ParsedDataset } | { ok: false; problems: string[] };

export class Problems {
  readonly list: string[] = [];
  more = 0;
  add(message: string): void {
    if (this.list.length < MAX_PROBLEMS) this.list.push(message);
    else this.more++;
  }
  get any(): boolean {
    return this.list.length > 0;
  }
  get full(): boolean {
    return this.list.length >= MAX_PROBLEMS;
  }
  result(): string[] {
    return this.more > 0 ? [...this.list, `… and ${this.more} more problems of the same kinds.`] : this.list;
  }
}

/** Which of comma, semicolon and tab separates the header line's fields (outside quotes). */
export function detectDelimiter(headerLine: string): "," | ";" | "\t" {
  const counts = { ",": 0, ";": 0, "\t": 0 };
  let quoted = false;
  for (const ch of headerLine) {
    if (ch === '"') quoted = !quoted;
    else if (!quoted && ch in counts) counts[ch as keyof typeof counts]++;
  }
  const best = (Object.keys(counts) as (keyof typeof counts)[]).sort((a, b) => counts[b] - counts[a])[0];
  return counts[best] > 0 ? best : ",";
}

/** The line (1-based) holding the first character the strict decoder refuses, and its byte offset. */
function locateBadUtf8(bytes: Buffer, startLine: number): { line: number; offset: number } {
  let line = startLine;
  let i = 0;
  while (i < bytes.length) {
    const b = bytes[i];
    const len = b < 0x80 ? 1 : b >= 0xc2 && b < 0xe0 ? 2 : b >= 0xe0 && b < 0xf0 ? 3 : b >= 0xf0 && b < 0xf5 ? 4 : 0;
    if (len === 0 || i + len > bytes.length) return { line, offset: i };
    try {
      new TextDecoder("utf-8", { fatal: true }).decode(bytes.subarray(i, i + len));
    } catch {
      return { line, offset: i };
    }
    if (b === 10) line++;
    i += len;
  }
  return { line, offset: i };
}

function headerProblems(file: string, names: string[], problems: Problems): void {
  const seen = new Map<string, number>();
  names.forEach((name, i) => {
    if (name === "") problems.add(`${file}: column ${i + 1} has no name in the header row. Give every column a name.`);
    else if (seen.has(name)) {
      problems.add(`${file}: the column name "${name}" is used twice (columns ${(seen.get(name) as number) + 1} and ${i + 1}). Column names must be unique.`);
    } else seen.set(name, i);
  });
}

function cellProblems(file: string, column: string, row: number, cell: string, problems: Problems): void {
  if (cell.length > MAX_CELL_CHARS) {
    problems.add(`${file}: column "${column}", row ${row}: the cell has ${cell.length} characters; the limit is ${MAX_CELL_CHARS}. Shorten it or leave free text out of the analysis dataset.`);
  }
  if (cell.includes(CELL_SEPARATOR)) problems.add(`${file}: column "${column}", row ${row}: the cell contains a NUL character (U+0000). Remove it and upload again.`);
}

/** Reads and checks a CSV file. */
export async function parseCsv(filePath: string, fileName: string, options: ParseOptions = {}): Promise<ParseOutcome> {
  const problems = new Problems();
  const total = (await stat(filePath)).size;
  let names: string[] | null = null;
  let cells: string[][] = [];
  const rowNumbers: number[] = [];
  let parser: ReturnType<typeof csvParser> | null = null;
  let linesSeen = 1;
  let read = 0;
  let badEncoding = false;
  let parseError: string | null = null;

  const onRecord = (record: string[]) => {
    if (names === null) {
      names = record.map((n) => n.trim());
      headerProblems(fileName, names, problems);
      cells = names.map(() => []);
      return;
    }
    const row = rowNumbers.length + 1;
    if (record.length !== names.length) {
      problems.add(
        `${fileName}: row ${row} has ${record.length} field${record.length === 1 ? "" : "s"} where the header has ${names.length} columns. Check its quotes and separators.`,
      );
    }
    rowNumbers.push(row);
    for (let j = 0; j < names.length; j++) {
      const cell = record[j] ?? "";
      if (cell.length > MAX_CELL_CHARS || cell.includes(CELL_SEPARATOR)) cellProblems(fileName, names[j] || `#${j + 1}`, row, cell, problems);
      cells[j].push(cell);
    }
  };

  const startParser = (delimiter: string) => {
    const p = csvParser({ delimiter, relax_column_count: true, skip_empty_lines: true, bom: true });
    p.on("data", onRecord);
    p.on("error", (e: Error & { code?: string; lines?: number }) => {
      parseError = `${fileName}: line ${e.lines ?? "?"}: ${e.message} Check the quotes on that line.`;
    });
    return p;
  };

  const write = (bytes: Buffer) =>
    new Promise<void>((resolve) => {
      if (!parser) return resolve();
      if (!parser.write(bytes)) parser.once("drain", resolve);
      else resolve();
    });

  // Bytes go to csv-parse as they are (it decodes each field once); UTF-8 is checked per chunk
  // with the native validator, carrying an incomplete character over to the next chunk.
  const stream = createReadStream(filePath, { highWaterMark: 1 << 20 });
  let carry: Buffer = Buffer.alloc(0);
  let head: Buffer[] = [];
  for await (const raw of stream as AsyncIterable<Buffer>) {
    let chunk = carry.length > 0 ? Buffer.concat([carry, raw]) : raw;
    let cut = chunk.length;
    // Back up over a character that continues into the next chunk (at most 3 bytes).
    for (let k = 1; k <= 3 && k <= chunk.length; k++) {
      const b = chunk[chunk.length - k];
      if ((b & 0xc0) === 0x80) continue;
      if (b >= 0xc0) {
        const need = b >= 0xf0 ? 4 : b >= 0xe0 ? 3 : 2;
        if (need > k) cut = chunk.length - k;
      }
      break;
    }
    carry = chunk.subarray(cut);
    chunk = chunk.subarray(0, cut);
    if (!isUtf8(chunk)) {
      const where = locateBadUtf8(chunk, linesSeen);
      problems.add(`${fileName}: line ${where.line} (byte ${read + where.offset + 1}) is not valid UTF-8. Save the file as UTF-8 and upload it again.`);
      badEncoding = true;
      break;
    }
    for (let i = chunk.indexOf(10); i !== -1; i = chunk.indexOf(10, i + 1)) linesSeen++;
    read += chunk.length;
    if (!parser) {
      head.push(chunk);
      const first = Buffer.concat(head);
      const eol = first.indexOf(10);
      if (eol === -1 && read < total) continue;
      parser = startParser(detectDelimiter(first.toString("utf8", 0, eol === -1 ? first.length : eol)));
      head = [];
      chunk = first;
    }
    await write(chunk);
    if (parseError) break;
    options.onProgress?.(read / Math.max(total, 1));
  }
  stream.destroy();
  if (!badEncoding) {
    if (carry.length > 0) {
      problems.add(`${fileName}: the file ends inside a UTF-8 character (line ${linesSeen}). Save the file as UTF-8 and upload it again.`);
      badEncoding = true;
    }
    if (!parser && head.length > 0) {
      const first = Buffer.concat(head);
      parser = startParser(detectDelimiter(first.toString("utf8").split("\n")[0]));
      await write(first);
    }
    const finished = parser as ReturnType<typeof csvParser> | null;
    if (finished) {
      await new Promise<void>((resolve) => {
        finished.once("end", resolve);
        finished.once("error", () => resolve());
        finished.end();
        finished.resume();
      });
    }
  }
  if (badEncoding) return { ok: false, problems: problems.result() };
  if (parseError) problems.add(parseError);
  const header = names as string[] | null;
  if (!header) {
    problems.add(`${fileName} is empty: it has no header row and no data rows.`);
    return { ok: false, problems: problems.result() };
  }
  if (rowNumbers.length === 0 && !problems.any) problems.add(`${fileName} has a header row but no data rows. Upload the file with its data.`);
  if (problems.any) return { ok: false, problems: problems.result() };
  const types = header.map((name, j) => declaredOrInferred(fileName, name, cells[j], options.numericColumns?.includes(name) ?? false, problems));
  for (const declared of options.numericColumns ?? []) {
    if (!header.includes(declared)) problems.add(`${fileName}: the column "${declared}" declared numeric is not in the file. Its columns are: ${header.join(", ")}.`);
  }
  return finish(fileName, "csv", header, header.map(() => null), types, cells, rowNumbers, options.keyColumns ?? null, problems);
}

function declaredOrInferred(file: string, name: string, cells: string[], numeric: boolean, problems: Problems): ColumnType {
  if (!numeric) return inferType(cells);
  let reported = 0;
  for (let i = 0; i < cells.length && reported < 3; i++) {
    if (!isMissingCell(cells[i]) && parseNumber(cells[i]) === null) {
      problems.add(`${file}: column "${name}", row ${i + 1}: "${cells[i].slice(0, 40)}" is text, but the column is declared numeric. Correct the value or leave the cell empty for missing.`);
      reported++;
    }
  }
  return "number";
}

function finish(
  file: string,
  format: DatasetFormat,
  names: string[],
  labels: (string | null)[],
  types: ColumnType[],
  cells: string[][],
  rowNumbers: number[],
  keyColumns: string[] | null,
  problems: Problems,
): ParseOutcome {
  if (problems.any) return { ok: false, problems: problems.result() };
  const key = findKey(file, names, cells, rowNumbers, keyColumns);
  if (!key.ok) return { ok: false, problems: key.problems };
  const columns = names.map((name, j) => summariseColumn(name, labels[j], types[j], cells[j]));
  return { ok: true, dataset: { format, names, cells, rowNumbers, columns, keyColumns: key.columns } };
}

/** Dataset-JSON v1.1 data types (CDISC Dataset-JSON v1.1 specification; list recalled from memory). */
const JSON_TYPES = ["string", "integer", "decimal", "float", "double", "boolean", "datetime", "date", "time", "URI"] as const;
type JsonDataType = (typeof JSON_TYPES)[number];

const TOP_LEVEL_REQUIRED = ["datasetJSONCreationDateTime", "datasetJSONVersion", "itemGroupOID", "records", "name", "label", "columns", "rows"] as const;

function typeOf(dataType: JsonDataType): ColumnType {
  if (dataType === "integer" || dataType === "decimal" || dataType === "float" || dataType === "double") return "number";
  if (dataType === "date") return "date";
  if (dataType === "datetime") return "datetime";
  return "text";
}

/**
 * Reads and checks a CDISC Dataset-JSON v1.1 file: the top-level attributes, each column's
 * itemOID, name, label and dataType, and every row against the declared types.
 */
export async function parseDatasetJson(filePath: string, fileName: string, options: ParseOptions = {}): Promise<ParseOutcome> {
  const problems = new Problems();
  const bytes = await readFile(filePath);
  let text: string;
  try {
    text = new TextDecoder("utf-8", { fatal: true }).decode(bytes);
  } catch {
    const where = locateBadUtf8(bytes, 1);
    return { ok: false, problems: [`${fileName}: line ${where.line} (byte ${where.offset + 1}) is not valid UTF-8. Save the file as UTF-8 and upload it again.`] };
  }
  options.onProgress?.(0.2);
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch (e) {
    return { ok: false, problems: [`${fileName} is not valid JSON (${(e as Error).message}). Export it again as Dataset-JSON.`] };
  }
  options.onProgress?.(0.5);
  const not = (what: string) => `${fileName} does not follow Dataset-JSON v1.1: ${what}.`;
  if (!doc || typeof doc !== "object" || Array.isArray(doc)) return { ok: false, problems: [not("the file must hold one JSON object")] };
  const d = doc as Record<string, unknown>;
  for (const key of TOP_LEVEL_REQUIRED) if (!(key in d)) problems.add(not(`the required attribute "${key}" is missing`));
  if (problems.any) return { ok: false, problems: problems.result() };
  if (typeof d.datasetJSONVersion !== "string" || !/^1\.1(\.\d+)?$/.test(d.datasetJSONVersion)) {
    problems.add(not(`"datasetJSONVersion" is ${JSON.stringify(d.datasetJSONVersion)}; Plumbline reads version 1.1`));
  }
  if (!Array.isArray(d.columns) || d.columns.length === 0) problems.add(not(`"columns" must be a non-empty array`));
  if (!Array.isArray(d.rows)) problems.add(not(`"rows" must be an array`));
  if (typeof d.records !== "number" || !Number.isInteger(d.records)) problems.add(not(`"records" must be a whole number`));
  if (problems.any) return { ok: false, problems: problems.result() };
  const columnsIn = d.columns as unknown[];
  const rowsIn = d.rows as unknown[];
  const names: string[] = [];
  const labels: (string | null)[] = [];
  const dataTypes: JsonDataType[] = [];
  const keyOrder: { name: string; seq: number }[] = [];
  columnsIn.forEach((c, i) => {
    const col = (c && typeof c === "object" ? c : {}) as Record<string, unknown>;
    for (const attr of ["itemOID", "name", "label", "dataType"]) {
      if (typeof col[attr] !== "string") problems.add(not(`columns[${i}] needs the text attribute "${attr}"`));
    }
    const dataType = col.dataType as JsonDataType;
    if (typeof col.dataType === "string" && !JSON_TYPES.includes(dataType)) {
      problems.add(not(`columns[${i}] ("${String(col.name)}") has dataType "${col.dataType}"; allowed are ${JSON_TYPES.join(", ")}`));
    }
    names.push(typeof col.name === "string" ? col.name.trim() : "");
    labels.push(typeof col.label === "string" ? col.label : null);
    dataTypes.push(dataType);
    if (typeof col.keySequence === "number") keyOrder.push({ name: String(col.name), seq: col.keySequence });
  });
  headerProblems(fileName, names, problems);
  if (problems.any) return { ok: false, problems: problems.result() };
  if (d.records !== rowsIn.length) problems.add(not(`"records" says ${String(d.records)} rows but "rows" holds ${rowsIn.length}`));
  if (rowsIn.length === 0) problems.add(`${fileName} has its columns but no data rows. Upload the file with its data.`);
  const cells: string[][] = names.map(() => new Array<string>(rowsIn.length));
  const rowNumbers: number[] = new Array<number>(rowsIn.length);
  for (let i = 0; i < rowsIn.length && !problems.full; i++) {
    const row = rowsIn[i];
    const n = i + 1;
    rowNumbers[i] = n;
    if (!Array.isArray(row)) {
      problems.add(not(`row ${n} must be an array of values`));
      continue;
    }
    if (row.length !== names.length) problems.add(`${fileName}: row ${n} has ${row.length} values where "columns" lists ${names.length}. Export the file again.`);
    for (let j = 0; j < names.length; j++) {
      const v = row[j] ?? null;
      const cell = jsonCell(fileName, names[j], dataTypes[j], v, n, problems);
      if (cell.length > MAX_CELL_CHARS || cell.includes(CELL_SEPARATOR)) cellProblems(fileName, names[j], n, cell, problems);
      cells[j][i] = cell;
    }
  }
  options.onProgress?.(0.8);
  const keys = options.keyColumns ?? (keyOrder.length > 0 ? keyOrder.sort((a, b) => a.seq - b.seq).map((k) => k.name) : null);
  return finish(fileName, "dataset-json", names, labels, dataTypes.map(typeOf), cells, rowNumbers, keys, problems);
}

/** One Dataset-JSON value as cell text, checked against its column's declared type. */
function jsonCell(file: string, column: string, dataType: JsonDataType, v: unknown, row: number, problems: Problems): string {
  if (v === null) return "";
  const numeric = dataType === "integer" || dataType === "float" || dataType === "double" || dataType === "decimal";
  if (numeric) {
    // v1.1 carries decimal values as text so that no digit is lost; the others as JSON numbers.
    const ok =
      dataType === "decimal"
        ? typeof v === "string" && (v === "" || parseNumber(v) !== null)
        : typeof v === "number" && (dataType !== "integer" || Number.isInteger(v));
    if (!ok) {
      problems.add(`${file}: column "${column}", row ${row}: ${JSON.stringify(v).slice(0, 40)} is not ${dataType === "integer" ? "a whole number" : "a number"}, but the column is declared numeric (${dataType}). Correct the value or use null for missing.`);
      return String(v);
    }
    return String(v);
  }
  if (dataType === "boolean") {
    if (typeof v !== "boolean") problems.add(`${file}: column "${column}", row ${row}: ${JSON.stringify(v).slice(0, 40)} is not true or false, as its dataType boolean requires.`);
    return String(v);
  }
  if (typeof v !== "string") {
    problems.add(`${file}: column "${column}", row ${row}: ${JSON.stringify(v).slice(0, 40)} must be text (dataType ${dataType}).`);
    return String(v);
  }
  if (dataType === "date" && v !== "" && !isIsoDate(v)) problems.add(`${file}: column "${column}", row ${row}: "${v.slice(0, 40)}" is not an ISO 8601 date (YYYY-MM-DD).`);
  if (dataType === "datetime" && v !== "" && !isIsoDateTime(v)) problems.add(`${file}: column "${column}", row ${row}: "${v.slice(0, 40)}" is not an ISO 8601 date and time.`);
  return v;
}

export function formatOf(fileName: string, firstBytes: Buffer): DatasetFormat {
  if (/\.(json|ndjson)$/i.test(fileName)) return "dataset-json";
  const start = firstBytes.toString("utf8").replace(/^\uFEFF/, "").trimStart();
  return start.startsWith("{") ? "dataset-json" : "csv";
}

export function parseDatasetFile(filePath: string, fileName: string, format: DatasetFormat, options: ParseOptions = {}): Promise<ParseOutcome> {
  return format === "csv" ? parseCsv(filePath, fileName, options) : parseDatasetJson(filePath, fileName, options);
}
