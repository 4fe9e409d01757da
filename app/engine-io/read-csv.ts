/**
 * Reads CSV text already in memory into the engine's column table: RFC 4180 through csv-parse
 * (quotes, embedded commas and line breaks, UTF-8 with or without byte-order mark). Row numbers
 * are 1-based data rows, header excluded. For the engine's tests on small reference files;
 * dataset files (uploads and the headless command) go through app/engine-io/dataset/.
 */
import { parse } from "csv-parse/sync";
import type { TextColumnTable } from "~/engine/data";
import { EngineError } from "~/engine/errors";

/** Parses CSV text with a header row; throws EngineError naming the problem. */
export function readCsvText(text: string): TextColumnTable {
  if (text.replace(/^\uFEFF/, "").trim() === "") throw new EngineError("the data file is empty");
  let records: string[][];
  try {
    records = parse(text, { bom: true, relax_column_count: true, skip_empty_lines: true }) as string[][];
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    throw new EngineError(`the data file is not valid CSV: ${message}`);
  }
  if (records.length === 0) throw new EngineError("the data file is empty");
  const header = records[0].map((h) => h.trim());
  const seen = new Set<string>();
  for (const h of header) {
    if (h === "") throw new EngineError("the header has an empty column name");
    if (seen.has(h)) throw new EngineError(`the header names column "${h}" twice`);
    seen.add(h);
  }
  const rows = records.slice(1);
  if (rows.length === 0) throw new EngineError("the data file has a header but no data rows");
  rows.forEach((r, i) => {
    if (r.length !== header.length) {
      throw new EngineError(`data row ${i + 1} has ${r.length} fields but the header has ${header.length}`);
    }
  });
  const columns: Record<string, string[]> = {};
  header.forEach((h, j) => (columns[h] = rows.map((r) => r[j])));
  return { columns, rowNumbers: rows.map((_, i) => i + 1) };
}
