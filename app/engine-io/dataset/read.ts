/**
 * Reads a dataset file of any format Plumbline takes: CSV, CDISC Dataset-JSON v1.1 (JSON or
 * NDJSON) and XPORT version 5. Used by the web upload (app/.server/datasets/parse.server.ts)
 * and the headless command (app/cli.ts), so both type columns the same way.
 */
import { createReadStream } from "node:fs";
import { open, readFile, stat } from "node:fs/promises";
import { readCsv, locateBadUtf8 } from "./csv";
import { readDatasetJsonText } from "./dataset-json";
import type { DatasetFormat, ReadOptions, ReadOutcome } from "./table";
import { readXport } from "./xport";

export type {
  DatasetFormat,
  ReadOptions,
  ReadOutcome,
  ReadTable,
  ReadColumn,
  ColumnReadMeta,
  ValueType,
  DatePrecision,
} from "./table";

const XPORT_START = "HEADER RECORD*******";

/** The format of a file, from its name and first bytes. */
export function formatOf(fileName: string, firstBytes: Buffer): DatasetFormat {
  if (/\.xpt$/i.test(fileName) || firstBytes.toString("latin1", 0, XPORT_START.length) === XPORT_START)
    return "xpt";
  if (/\.(json|ndjson)$/i.test(fileName)) return "dataset-json";
  const start = firstBytes
    .toString("utf8")
    .replace(/^\uFEFF/, "")
    .trimStart();
  return start.startsWith("{") ? "dataset-json" : "csv";
}

/** The first bytes of a file (for formatOf). */
export async function firstBytesOf(filePath: string, n = 80): Promise<Buffer> {
  const head = Buffer.alloc(n);
  const fh = await open(filePath, "r");
  const { bytesRead } = await fh.read(head, 0, n, 0).finally(() => fh.close());
  return head.subarray(0, bytesRead);
}

/** Reads and checks one dataset file; every problem names the file (and the column and row). */
export async function readDatasetFile(
  filePath: string,
  fileName: string,
  format: DatasetFormat,
  options: ReadOptions = {},
): Promise<ReadOutcome> {
  const size = (await stat(filePath)).size;
  if (size === 0) return { ok: false, problems: [`The file ${fileName} is empty.`] };
  if (format === "xpt") return readXport(filePath, fileName, options);
  if (format === "csv")
    return readCsv(createReadStream(filePath, { highWaterMark: 1 << 20 }), size, fileName, options);
  const bytes = await readFile(filePath);
  let text: string;
  try {
    text = new TextDecoder("utf-8", { fatal: true }).decode(bytes);
  } catch {
    const where = locateBadUtf8(bytes, 1);
    return {
      ok: false,
      problems: [
        `${fileName}: line ${where.line} (byte ${where.offset + 1}) is not valid UTF-8. Save the file as UTF-8 and upload it again.`,
      ],
    };
  }
  options.onProgress?.(0.2);
  return readDatasetJsonText(text, fileName, options);
}
