/**
 * CSV reader: csv-parse as a stream (RFC 4180 quoting; comma, semicolon or tab detected from
 * the header line; UTF-8 with or without one byte-order mark, checked strictly). The header
 * line is measured and its fields counted before any parsing, so a file with a huge header is
 * refused at once. With semicolons, decimal commas are read as decimal points.
 */
import { isUtf8 } from "node:buffer";
import { parse as csvParser } from "csv-parse";
import { isMissingCell, parseNumber } from "../../engine/data";
import { DEFAULT_LIMITS, type ReadLimits } from "./limits";
import { count, Problems } from "./problems";
import {
  checkCell,
  checkNames,
  trimName,
  type ReadColumn,
  type ReadOptions,
  type ReadOutcome,
} from "./table";
import { decimalCommaCells, inferValueType, mostlyNumbersWarning } from "./typing";

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

/** Fields in the header line (separators outside quotes, plus one). */
function fieldsIn(headerLine: string, delimiter: string): number {
  let n = 1;
  let quoted = false;
  for (let i = 0; i < headerLine.length; i++) {
    const ch = headerLine[i];
    if (ch === '"') quoted = !quoted;
    else if (!quoted && ch === delimiter) n++;
  }
  return n;
}

/** The line (1-based) holding the first character the strict decoder refuses, and its byte offset. */
export function locateBadUtf8(bytes: Buffer, startLine: number): { line: number; offset: number } {
  let line = startLine;
  let i = 0;
  while (i < bytes.length) {
    const b = bytes[i];
    const len =
      b < 0x80 ? 1 : b >= 0xc2 && b < 0xe0 ? 2 : b >= 0xe0 && b < 0xf0 ? 3 : b >= 0xf0 && b < 0xf5 ? 4 : 0;
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

/** Reads and checks CSV bytes as they arrive from `source` (totalBytes only drives progress). */
export async function readCsv(
  source: AsyncIterable<Buffer>,
  totalBytes: number,
  fileName: string,
  options: ReadOptions = {},
): Promise<ReadOutcome> {
  const limits: ReadLimits = { ...DEFAULT_LIMITS, ...options.limits };
  const problems = new Problems();
  let names: string[] | null = null;
  let cells: string[][] = [];
  const rowNumbers: number[] = [];
  let parser: ReturnType<typeof csvParser> | null = null;
  let delimiter = ",";
  let linesSeen = 1;
  let read = 0;
  let stop = false;
  let parseError: string | null = null;

  const onRecord = (record: string[]) => {
    if (names === null) {
      names = record.map(trimName);
      checkNames(fileName, names, limits, problems);
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
      if (cell.length > limits.maxCellChars || cell.includes("\u0000"))
        checkCell(fileName, names[j] || `#${j + 1}`, row, cell, limits, problems);
      cells[j].push(cell);
    }
  };

  const startParser = (headerLine: string): boolean => {
    delimiter = detectDelimiter(headerLine);
    const fields = fieldsIn(headerLine, delimiter);
    if (fields > limits.maxColumns) {
      problems.add(
        `${fileName} has ${fields.toLocaleString("en-US")} columns; the limit is ${limits.maxColumns.toLocaleString("en-US")}. Upload only the columns the analysis needs, or ask an administrator to raise DATASET_MAX_COLUMNS.`,
      );
      return false;
    }
    const p = csvParser({ delimiter, relax_column_count: true, skip_empty_lines: true, bom: true });
    p.on("data", onRecord);
    p.on("error", (e: Error & { lines?: number }) => {
      parseError = `${fileName}: line ${e.lines ?? "?"}: ${e.message} Check the quotes on that line.`;
    });
    parser = p;
    return true;
  };

  // Resolves when the parser takes more input, and also when it fails: a parser that has
  // failed never drains, and waiting for it would hold the upload (and its work file) forever.
  const write = (bytes: Buffer) =>
    new Promise<void>((resolve) => {
      const p = parser;
      if (!p || parseError) return resolve();
      if (p.write(bytes)) return resolve();
      const done = () => {
        p.off("drain", done);
        p.off("error", done);
        resolve();
      };
      p.once("drain", done);
      p.once("error", done);
    });

  // Bytes go to csv-parse as they are (it decodes each field once); UTF-8 is checked per chunk
  // with the native validator, carrying an incomplete character over to the next chunk.
  let carry: Buffer = Buffer.alloc(0);
  let head: Buffer[] = [];
  let headBytes = 0;
  const iterator = source[Symbol.asyncIterator]();
  try {
    for (;;) {
      const next = await iterator.next();
      if (next.done) break;
      const raw = next.value;
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
        problems.add(
          `${fileName}: line ${where.line} (byte ${read + where.offset + 1}) is not valid UTF-8. Save the file as UTF-8 and upload it again.`,
        );
        stop = true;
        break;
      }
      for (let i = chunk.indexOf(10); i !== -1; i = chunk.indexOf(10, i + 1)) linesSeen++;
      read += chunk.length;
      if (!parser) {
        head.push(chunk);
        headBytes += chunk.length;
        const eol = chunk.indexOf(10);
        if (eol === -1 && headBytes <= limits.maxHeaderBytes) continue;
        const first = Buffer.concat(head);
        const end = first.indexOf(10);
        if (end === -1 || end > limits.maxHeaderBytes) {
          problems.add(
            `${fileName}: the header line is longer than ${limits.maxHeaderBytes.toLocaleString("en-US")} bytes, the limit. Upload only the columns the analysis needs, or ask an administrator to raise DATASET_MAX_HEADER_BYTES.`,
          );
          stop = true;
          break;
        }
        head = [];
        if (!startParser(first.toString("utf8", 0, end))) {
          stop = true;
          break;
        }
        chunk = first;
      }
      await write(chunk);
      if (parseError || (problems.full && names !== null)) break;
      options.onProgress?.(read / Math.max(totalBytes, 1));
    }
  } finally {
    await iterator.return?.();
  }
  if (!stop && !parseError) {
    if (carry.length > 0) {
      problems.add(
        `${fileName}: the file ends inside a UTF-8 character (line ${linesSeen}). Save the file as UTF-8 and upload it again.`,
      );
      stop = true;
    } else {
      if (!parser && head.length > 0) {
        const first = Buffer.concat(head);
        if (startParser(first.toString("utf8").split("\n")[0])) await write(first);
        else stop = true;
      }
      const finished = parser as ReturnType<typeof csvParser> | null;
      if (finished && !parseError && !stop) {
        await new Promise<void>((resolve) => {
          finished.once("end", resolve);
          finished.once("error", () => resolve());
          finished.end();
          finished.resume();
        });
      }
    }
  }
  (parser as ReturnType<typeof csvParser> | null)?.destroy();
  if (parseError) problems.add(parseError);
  if (stop || problems.any) return { ok: false, problems: problems.result() };
  const header = names as string[] | null;
  if (!header)
    return { ok: false, problems: [`The file ${fileName} is empty: it has no header row and no data rows.`] };
  if (rowNumbers.length === 0)
    return {
      ok: false,
      problems: [`${fileName} has a header row but no data rows. Upload the file with its data.`],
    };

  const numeric = new Set(options.numericColumns ?? []);
  for (const declared of numeric) {
    if (!header.includes(declared))
      problems.add(
        `${fileName}: the column "${declared}" declared numeric is not in the file. Its columns are: ${header.join(", ")}.`,
      );
  }
  const columns: ReadColumn[] = header.map((name, j) => {
    const column: ReadColumn = { name, label: null, valueType: "text" };
    if (delimiter === ";") {
      const converted = decimalCommaCells(cells[j]);
      if (converted) {
        cells[j] = converted;
        column.decimalComma = true;
      }
    }
    if (numeric.has(name)) {
      column.declaredType = "number";
      const bad: number[] = [];
      for (let i = 0; i < cells[j].length; i++)
        if (!isMissingCell(cells[j][i]) && parseNumber(cells[j][i]) === null) bad.push(i);
      if (bad.length > 0) {
        if (bad.length === 1) {
          problems.add(
            `${fileName}: column "${name}", row ${rowNumbers[bad[0]]}: "${cells[j][bad[0]].slice(0, 40)}" is text, but the column is declared numeric. Correct the value or leave the cell empty for missing.`,
          );
        } else {
          const first = bad.slice(0, 3).map((i) => `row ${rowNumbers[i]} "${cells[j][i].slice(0, 40)}"`);
          problems.add(
            `${fileName}: ${count(bad.length, "cell")} in column "${name}", declared numeric, hold text; first: ${first.join(", ")}${bad.length > 3 ? ", …" : ""}. Correct them or leave the cells empty for missing.`,
          );
        }
      }
      const t = inferValueType(cells[j]);
      column.valueType = t === "integer" ? "integer" : "number";
      return column;
    }
    column.valueType = inferValueType(cells[j]);
    if (column.valueType === "text") {
      const warning = mostlyNumbersWarning(fileName, name, cells[j], rowNumbers);
      if (warning) column.warnings = [warning];
    }
    return column;
  });
  if (problems.any) return { ok: false, problems: problems.result() };
  return {
    ok: true,
    table: {
      format: "csv",
      datasetName: null,
      datasetLabel: null,
      names: header,
      cells,
      rowNumbers,
      columns,
      declaredKey: null,
    },
  };
}
