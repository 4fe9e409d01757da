/**
 * The former parsed form of a dataset version (`<sha256>.cols`), replaced by the Arrow IPC file
 * of arrow-columns.server.ts. Kept only so that versions stored before the change can be
 * migrated at start-up (columns-migration.server.ts); the writer stays for the migration's test,
 * which makes a store the way earlier releases did.
 *
 * Layout: the line `PLCOLS1`, one line of JSON (row count, and per column its name, encoding
 * and segment length), then the row numbers as little-endian Int32, then per column either its
 * cells joined by U+0000 (validation refuses cells that contain U+0000) or, for columns with
 * few distinct values, those values joined by U+0000 followed by one 1- or 2-byte code per
 * row. Loading is one read, one `split` per column and a table look-up for coded columns, so
 * the strings of repeated values are shared instead of made again; scripts/bench-datasets.ts
 * measured it.
 */
import { isAscii } from "node:buffer";
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

interface ColumnEntry {
  name: string;
  /** Byte length of the column's text segment (plain: every cell; dict: the distinct values). */
  bytes: number;
  /** "dict": the distinct values, then one code per row (1 or 2 bytes, little-endian). */
  encoding?: "plain" | "dict";
  codeBytes?: 1 | 2;
  /** True when the text segment is pure ASCII (read as latin1, which is faster). */
  ascii?: boolean;
}

interface Header {
  rowCount: number;
  columns: ColumnEntry[];
}

/** Columns with at most this many distinct values are stored as a dictionary and codes. */
const MAX_DICTIONARY = 65_535;

function encodeColumn(name: string, column: string[]): { entry: ColumnEntry; parts: Buffer[] } {
  const codes = new Map<string, number>();
  for (const cell of column) {
    if (!codes.has(cell)) {
      codes.set(cell, codes.size);
      if (codes.size > MAX_DICTIONARY || codes.size > column.length / 2) break;
    }
  }
  if (codes.size <= MAX_DICTIONARY && codes.size <= column.length / 2) {
    const text = Buffer.from([...codes.keys()].join(CELL_SEPARATOR), "utf8");
    const codeBytes = codes.size <= 256 ? 1 : 2;
    const packed = Buffer.alloc(column.length * codeBytes);
    for (let i = 0; i < column.length; i++) {
      const c = codes.get(column[i]) as number;
      if (codeBytes === 1) packed[i] = c;
      else packed.writeUInt16LE(c, 2 * i);
    }
    return {
      entry: { name, bytes: text.length, encoding: "dict", codeBytes, ascii: isAscii(text) },
      parts: [text, packed],
    };
  }
  const text = Buffer.from(column.join(CELL_SEPARATOR), "utf8");
  return { entry: { name, bytes: text.length, encoding: "plain", ascii: isAscii(text) }, parts: [text] };
}

/** Writes parsed columns in the former format (only tests make such files now). */
export async function writeLegacyColumnsFile(file: string, parsed: ParsedColumns): Promise<void> {
  const encoded = parsed.cells.map((column, j) => encodeColumn(parsed.names[j], column));
  const header: Header = { rowCount: parsed.rowNumbers.length, columns: encoded.map((e) => e.entry) };
  const rowNumbers = Buffer.from(Int32Array.from(parsed.rowNumbers).buffer);
  const handle = await open(file, "w");
  try {
    await handle.write(MAGIC + JSON.stringify(header) + "\n");
    await handle.write(rowNumbers);
    for (const e of encoded) for (const part of e.parts) await handle.write(part);
    await handle.sync();
  } finally {
    await handle.close();
  }
}

/** Reads a columns file in the former format. */
export async function readLegacyColumnsFile(file: string): Promise<ParsedColumns> {
  const buf = await readFile(file);
  if (buf.toString("latin1", 0, MAGIC.length) !== MAGIC) {
    throw new Error(`${file} is not a Plumbline columns file; the store may be damaged.`);
  }
  const headerEnd = buf.indexOf(10, MAGIC.length);
  const header = JSON.parse(buf.toString("utf8", MAGIC.length, headerEnd)) as Header;
  const n = header.rowCount;
  let offset = headerEnd + 1;
  const rowNumbers = new Array<number>(n);
  for (let i = 0; i < n; i++) rowNumbers[i] = buf.readInt32LE(offset + 4 * i);
  offset += 4 * n;
  const cells: string[][] = [];
  for (const column of header.columns) {
    const text = buf.toString(column.ascii ? "latin1" : "utf8", offset, offset + column.bytes);
    offset += column.bytes;
    if (column.encoding === "dict") {
      const values = n === 0 ? [] : text.split(CELL_SEPARATOR);
      const width = column.codeBytes ?? 1;
      const out: string[] = [];
      if (width === 1) for (let i = 0; i < n; i++) out.push(values[buf[offset + i]]);
      else for (let i = 0; i < n; i++) out.push(values[buf.readUInt16LE(offset + 2 * i)]);
      offset += n * width;
      cells.push(out);
    } else {
      cells.push(n === 0 ? [] : text.split(CELL_SEPARATOR));
    }
  }
  return { names: header.columns.map((c) => c.name), cells, rowNumbers };
}
