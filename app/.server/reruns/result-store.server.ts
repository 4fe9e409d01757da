/**
 * Reading a rerun's stored result, and moving results stored in the row to their files.
 *
 * A completed rerun's result is the file `results/<aa>/<sha256>.json` under DATA_DIR, written by
 * the compute thread (`result-files.ts`). Reruns completed before that kept it in the row
 * (`reruns.result_json`); those are read from the row until `migrateStoredResults` has moved
 * them: it writes the file (work file, then rename), and only once the file's bytes hash to the
 * recorded SHA-256 empties the row's column, in a transaction that checks the hash again. An
 * interruption at any point leaves the result readable from one place or both (same bytes), and
 * the next pass finishes the move. The bytes and their SHA-256 never change, so the audit trail,
 * the signatures and the appendices that name the hash still hold.
 *
 * Every read checks the bytes against the recorded SHA-256 (streamed with the read) and refuses a
 * result that no longer matches, rather than show or sign what the audit trail does not record.
 */
import { createHash } from "node:crypto";
import { createReadStream } from "node:fs";
import path from "node:path";
import { and, eq, isNotNull } from "drizzle-orm";
import { config } from "../config.server";
import { db, t, writeTransaction } from "../db/index.server";
import { resultRelativePath, sweepResultWorkFiles, writeResultFile } from "./result-files";

/** A stored result whose bytes differ from the SHA-256 recorded with its rerun. */
export class StoredResultMismatch extends Error {}

const mismatch = (id: string, where: string) =>
  new StoredResultMismatch(
    `The stored result of rerun ${id} (${where}) does not match the SHA-256 recorded when it completed; it was changed since and is not shown.`,
  );

/** The result file's bytes with their SHA-256, or null when there is no file. */
async function readHashed(file: string): Promise<{ text: string; sha256: string } | null> {
  const hash = createHash("sha256");
  const chunks: Buffer[] = [];
  try {
    for await (const chunk of createReadStream(file, { highWaterMark: 1 << 22 }) as AsyncIterable<Buffer>) {
      hash.update(chunk);
      chunks.push(chunk);
    }
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === "ENOENT") return null;
    throw e;
  }
  return { text: Buffer.concat(chunks).toString("utf8"), sha256: hash.digest("hex") };
}

/**
 * Checks a completed rerun's result file against its recorded SHA-256 without keeping its bytes
 * (for readers of data derived from it, `derived-files.ts`): true when it matches, false when
 * there is no file; throws StoredResultMismatch when it no longer matches.
 */
export async function verifyStoredResult(row: { id: string; resultSha256: string | null }): Promise<boolean> {
  if (!row.resultSha256) return false;
  const relative = resultRelativePath(row.resultSha256);
  const hash = createHash("sha256");
  try {
    for await (const chunk of createReadStream(path.resolve(config.DATA_DIR, relative), {
      highWaterMark: 1 << 22,
    }) as AsyncIterable<Buffer>)
      hash.update(chunk);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === "ENOENT") return false;
    throw e;
  }
  if (hash.digest("hex") !== row.resultSha256) throw mismatch(row.id, relative);
  return true;
}

/** The result as stored before it moved to files (the row's column), or null. */
async function rowResultJson(id: string): Promise<string | null> {
  const [row] = await db.select({ json: t.reruns.resultJson }).from(t.reruns).where(eq(t.reruns.id, id));
  return row?.json ?? null;
}

const sha256Of = (text: string) => createHash("sha256").update(text).digest("hex");

/** The canonical JSON of a completed rerun's result, checked against its recorded SHA-256; null without one. */
export async function storedResultJson(row: {
  id: string;
  resultSha256: string | null;
}): Promise<string | null> {
  if (!row.resultSha256) return null;
  const relative = resultRelativePath(row.resultSha256);
  const file = await readHashed(path.resolve(config.DATA_DIR, relative));
  if (file) {
    if (file.sha256 !== row.resultSha256) throw mismatch(row.id, relative);
    return file.text;
  }
  const json = await rowResultJson(row.id);
  if (json === null) return null;
  if (sha256Of(json) !== row.resultSha256) throw mismatch(row.id, "its row");
  return json;
}

/**
 * Moves every result still stored in its row to its file (see above), after removing work files
 * of processes that stopped half-way. Safe to interrupt and to repeat; a row whose bytes do not
 * match its hash is left as it is and reported.
 */
export async function migrateStoredResults(): Promise<{ moved: number; refused: string[] }> {
  await sweepResultWorkFiles(path.resolve(config.DATA_DIR));
  const rows = await db
    .select({ id: t.reruns.id, sha256: t.reruns.resultSha256 })
    .from(t.reruns)
    .where(isNotNull(t.reruns.resultJson));
  let moved = 0;
  const refused: string[] = [];
  for (const r of rows) {
    const json = await rowResultJson(r.id);
    if (json === null) continue;
    if (!r.sha256 || sha256Of(json) !== r.sha256) {
      refused.push(r.id);
      continue;
    }
    const relative = await writeResultFile(path.resolve(config.DATA_DIR), r.sha256, json);
    const written = await readHashed(path.resolve(config.DATA_DIR, relative));
    if (written?.sha256 !== r.sha256) {
      refused.push(r.id);
      continue;
    }
    await writeTransaction((tx) =>
      tx
        .update(t.reruns)
        .set({ resultJson: null })
        .where(and(eq(t.reruns.id, r.id), eq(t.reruns.resultSha256, r.sha256!))),
    );
    moved++;
  }
  return { moved, refused };
}
