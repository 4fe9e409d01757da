/**
 * Where dataset files live under DATA_DIR:
 *
 *   datasets/blobs/<aa>/<sha256>          the exact bytes of an uploaded file, named by their SHA-256
 *   datasets/columns/<aa>/<sha256>.arrow  the typed columns of those bytes, Arrow IPC (arrow-columns.server.ts)
 *   datasets/columns/<aa>/<sha256>.cols   the same in the former format, until migrated at start-up
 *   datasets/tmp/                         work files of uploads in progress
 *
 * An upload writes only into tmp/ and renames into the store once the file has passed every
 * check; the database rows follow in one transaction. A process killed half-way therefore
 * leaves at most a work file in tmp/ (or, between rename and commit, an unreferenced store
 * file), and `sweepDatasetLeftovers` removes both the next time uploads start.
 */
import { createHash, randomBytes } from "node:crypto";
import { createReadStream, existsSync } from "node:fs";
import { mkdir, readdir, rename, rm, stat } from "node:fs/promises";
import path from "node:path";
import { config } from "../config.server";

export function datasetsRoot(): string {
  return path.resolve(config.DATA_DIR, "datasets");
}

/** Paths stored in the database are relative to DATA_DIR, so the folder can move. */
export function absoluteStorePath(relative: string): string {
  return path.resolve(config.DATA_DIR, relative);
}

/** SHA-256 of a file, streamed. */
export async function sha256OfFile(file: string): Promise<string> {
  const hash = createHash("sha256");
  for await (const chunk of createReadStream(file, { highWaterMark: 1 << 20 }) as AsyncIterable<Buffer>)
    hash.update(chunk);
  return hash.digest("hex");
}

export function blobRelativePath(sha256: string): string {
  return path.join("datasets", "blobs", sha256.slice(0, 2), sha256);
}

export function columnsRelativePath(sha256: string): string {
  return path.join("datasets", "columns", sha256.slice(0, 2), `${sha256}.arrow`);
}

/** Where earlier releases kept the parsed columns (columns-file.server.ts); read only to migrate. */
export function legacyColumnsRelativePath(sha256: string): string {
  return path.join("datasets", "columns", sha256.slice(0, 2), `${sha256}.cols`);
}

/** A fresh work-file path in tmp/; the name carries the process id so sweeps spare live work. */
export async function newWorkPath(suffix: string): Promise<string> {
  const dir = path.join(datasetsRoot(), "tmp");
  await mkdir(dir, { recursive: true });
  return path.join(dir, `${process.pid}-${Date.now()}-${randomBytes(6).toString("hex")}.${suffix}`);
}

/**
 * Moves a finished work file to its place in the store. The store is content-addressed: when
 * the target exists it already holds these very bytes, and the work file is dropped. True when
 * this call put a new file in the store (which the caller removes again if its upload fails).
 */
export async function moveIntoStore(workPath: string, relative: string): Promise<boolean> {
  const target = absoluteStorePath(relative);
  await mkdir(path.dirname(target), { recursive: true });
  if (existsSync(target)) {
    await rm(workPath, { force: true });
    return false;
  }
  await rename(workPath, target);
  return true;
}

export async function removeQuietly(file: string | null | undefined): Promise<void> {
  if (file) await rm(file, { force: true }).catch(() => undefined);
}

/**
 * Deletes a version's files from the store: its original bytes and its columns (Arrow, and the
 * former format if still there). The store is content-addressed, so the caller makes sure no
 * other version refers to the same SHA-256 before calling this.
 */
export async function deleteVersionFiles(v: {
  sha256: string;
  storedPath: string;
  parsedPath: string | null;
}): Promise<void> {
  const files = new Set(
    [
      v.storedPath,
      v.parsedPath ?? "",
      columnsRelativePath(v.sha256),
      legacyColumnsRelativePath(v.sha256),
    ].filter(Boolean),
  );
  for (const relative of files) await rm(absoluteStorePath(relative), { force: true });
}

function processAlive(pid: number): boolean {
  if (pid === process.pid) return true;
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === "EPERM";
  }
}

/**
 * Removes what interrupted uploads left behind: work files of processes that are gone (or older
 * than a day), and store files that no dataset version refers to and that are older than
 * `graceMs` (a younger one may belong to an upload that is committing right now).
 */
export async function sweepDatasetLeftovers(
  referenced: Set<string>,
  graceMs = 10 * 60_000,
): Promise<string[]> {
  const removed: string[] = [];
  const root = datasetsRoot();
  const tmp = path.join(root, "tmp");
  const now = Date.now();
  for (const name of existsSync(tmp) ? await readdir(tmp) : []) {
    const pid = Number(name.split("-")[0]);
    const file = path.join(tmp, name);
    const age = now - (await stat(file).catch(() => ({ mtimeMs: now }))).mtimeMs;
    if (!Number.isInteger(pid) || !processAlive(pid) || age > 86_400_000) {
      await removeQuietly(file);
      removed.push(path.relative(config.DATA_DIR, file));
    }
  }
  for (const kind of ["blobs", "columns"]) {
    const base = path.join(root, kind);
    if (!existsSync(base)) continue;
    for (const shard of await readdir(base)) {
      for (const name of await readdir(path.join(base, shard))) {
        const file = path.join(base, shard, name);
        const relative = path.relative(path.resolve(config.DATA_DIR), file);
        if (referenced.has(relative)) continue;
        const age = now - (await stat(file)).mtimeMs;
        if (age >= graceMs) {
          await removeQuietly(file);
          removed.push(relative);
        }
      }
    }
  }
  return removed;
}
