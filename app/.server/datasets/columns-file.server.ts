/**
 * The parsed form of a dataset version, kept beside its exact bytes so that reruns and the
 * preview never parse the file again.
 *
 * Layout: the line `PLCOLS1`, one line of JSON (row count, column names and the byte length
 * of each segment), then the row numbers as little-endian Int32, then one UTF-8 segment per
 * column holding its cells joined by U+0000 (validation refuses cells that contain U+0000).
 * Loading is one read and one `split` per column: about 0.3 s for 200 000 rows x 25 columns,
 * where JSON.parse of the same cells takes several times longer (measured with
 * scripts/bench-datasets.ts).
 */
import { open, readFile } from "node:fs/promises";

const MAGIC = "PLCOLS1\n";
export const CELL_SEPARATOR = "\u0000";

export interface ParsedColumns {
  names: string[];
  /** One array of cell text per column, in `names` order. */
  cells: string[][];
  /** 1-based data row number in the original file of each row. */
  rowNumbers: number[];
}

interface Header {
  rowCount: number;
  columns: { name: string; bytes: number }[];
}

/** Writes the parsed columns to `file` (a work file; the caller moves it into the store). */
export async function writeColumnsFile(file: string, parsed: ParsedColumns): Promise<void> {
  const segments = parsed.cells.map((column) => Buffer.from(column.join(CELL_SEPARATOR), "utf8"));
  const header: Header = {
    rowCount: parsed.rowNumbers.length,
    columns: parsed.names.map((name, i) => ({ name, bytes: segments[i].length })),
  };
  const rowNumbers = Buffer.from(Int32Array.from(parsed.rowNumbers).buffer);
  const handle = await open(file, "w");
  try {
    await handle.write(MAGIC + JSON.stringify(header) + "\n");
    await handle.write(rowNumbers);
    for (const segment of segments) await handle.write(segment);
    await handle.sync();
  } finally {
    await handle.close();
  }
}

/** Reads a columns file written by `writeColumnsFile`. */
export async function readColumnsFile(file: string): Promise<ParsedColumns> {
  const buf = await readFile(file);
  if (buf.toString("latin1", 0, MAGIC.length) !== MAGIC) {
    throw new Error(`${file} is not a Plumbline columns file; the store may be damaged.`);
  }
  const headerEnd = buf.indexOf(10, MAGIC.length);
  const header = JSON.parse(buf.toString("utf8", MAGIC.length, headerEnd)) as Header;
  let offset = headerEnd + 1;
  const rowNumbers = new Array<number>(header.rowCount);
  for (let i = 0; i < header.rowCount; i++) rowNumbers[i] = buf.readInt32LE(offset + 4 * i);
  offset += 4 * header.rowCount;
  const cells: string[][] = [];
  for (const column of header.columns) {
    const text = buf.toString("utf8", offset, offset + column.bytes);
    cells.push(header.rowCount === 0 ? [] : text.split(CELL_SEPARATOR));
    offset += column.bytes;
  }
  return { names: header.columns.map((c) => c.name), cells, rowNumbers };
}

/** A small cache of recently read columns files (locked content never changes). */
const cache = new Map<string, Promise<ParsedColumns>>();
const CACHE_ENTRIES = 2;

export function readColumnsFileCached(file: string): Promise<ParsedColumns> {
  const hit = cache.get(file);
  if (hit) {
    cache.delete(file);
    cache.set(file, hit);
    return hit;
  }
  const loading = readColumnsFile(file);
  cache.set(file, loading);
  loading.catch(() => cache.delete(file));
  while (cache.size > CACHE_ENTRIES) cache.delete(cache.keys().next().value as string);
  return loading;
}
