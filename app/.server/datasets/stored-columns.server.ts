/**
 * A dataset version's typed columns in the store: made from a parsed upload, read for the
 * preview and for reruns, and migrated from the former `.cols` format.
 *
 * Migration: a version whose `parsed_path` still names a `.cols` file gets its Arrow file written
 * from that file (or, when it is gone, by parsing the stored original bytes again after checking
 * their SHA-256), through a work file renamed into place, then `parsed_path` is updated and the
 * `.cols` file removed. Each step can be interrupted and repeated: a rerun of the migration
 * finds the Arrow file already in place and only finishes the remaining steps. The original
 * bytes and their SHA-256 are never touched. Runs once at start-up for every such version, and
 * on demand when a version is read before the start-up pass reached it (or when its Arrow file
 * has gone missing). The same columns always give the same Arrow bytes.
 */
import { existsSync } from "node:fs";
import { eq, isNull, like, or } from "drizzle-orm";
import { db, t, writeTransaction } from "../db/index.server";
import { readArrowColumnsCached, writeArrowColumns, type StoredColumns } from "./arrow-columns.server";
import { readLegacyColumnsFile } from "./columns-file.server";
import { parseDatasetFile } from "./parse.server";
import {
  absoluteStorePath,
  columnsRelativePath,
  legacyColumnsRelativePath,
  moveIntoStore,
  newWorkPath,
  removeQuietly,
  sha256OfFile,
} from "./store.server";

type VersionRow = typeof t.datasetVersions.$inferSelect;

import { storedColumnsFromParsed } from "./parsed-columns";

export { storedColumnsFromParsed, type ParsedForStore } from "./parsed-columns";

/** True when the version's Arrow file is still to be written: a former `.cols` path, or none in place. */
function needsArrow(v: VersionRow): boolean {
  return (
    v.parsedPath === null || !v.parsedPath.endsWith(".arrow") || !existsSync(absoluteStorePath(v.parsedPath))
  );
}

/** The cell text of a version in the former store: its `.cols` file, else its original bytes parsed again. */
async function legacyCells(
  v: VersionRow,
): Promise<{ names: string[]; cells: string[][]; rowNumbers: number[] }> {
  const cols = [v.parsedPath, legacyColumnsRelativePath(v.sha256)].find(
    (p): p is string => Boolean(p) && existsSync(absoluteStorePath(p as string)),
  );
  if (cols) return readLegacyColumnsFile(absoluteStorePath(cols));
  const original = absoluteStorePath(v.storedPath);
  if (!existsSync(original))
    throw new Error(
      `Dataset version ${v.version} (${v.fileName}) has neither columns nor its original file in the store; upload the file again.`,
    );
  const actual = await sha256OfFile(original);
  if (actual !== v.sha256)
    throw new Error(
      `The stored file of dataset version ${v.version} (${v.fileName}) no longer matches its SHA-256 ${v.sha256}; its columns were not rebuilt. Upload the file again.`,
    );
  const outcome = await parseDatasetFile(original, v.fileName, v.format, {
    keyColumns: JSON.parse(v.keyColumnsJson) as string[],
  });
  if (!outcome.ok)
    throw new Error(
      `Dataset version ${v.version} (${v.fileName}) could not be read again to rebuild its columns: ${outcome.problems.join(" ")}`,
    );
  return outcome.dataset;
}

const inFlight = new Map<string, Promise<string>>();

/**
 * Writes the Arrow file of a version still in the former format and points the version at it.
 * Returns the Arrow file's path relative to DATA_DIR. Safe to repeat and to interrupt.
 */
export function migrateVersionColumns(v: VersionRow): Promise<string> {
  const running = inFlight.get(v.id);
  if (running) return running;
  const work = (async () => {
    const arrow = columnsRelativePath(v.sha256);
    if (!existsSync(absoluteStorePath(arrow))) {
      const legacy = await legacyCells(v);
      const stored = storedColumnsFromParsed({
        names: legacy.names,
        cells: legacy.cells,
        rowNumbers: legacy.rowNumbers,
        columns: legacy.names.map(
          (name) =>
            (JSON.parse(v.columnsJson) as { name: string }[]).find((c) => c.name === name) ?? { name },
        ),
        format: v.format,
        keyColumns: JSON.parse(v.keyColumnsJson) as string[],
      });
      const workPath = await newWorkPath("arrow");
      try {
        await writeArrowColumns(workPath, stored);
        await moveIntoStore(workPath, arrow);
      } finally {
        await removeQuietly(workPath);
      }
    }
    await writeTransaction((tx) =>
      tx.update(t.datasetVersions).set({ parsedPath: arrow }).where(eq(t.datasetVersions.id, v.id)),
    );
    for (const old of new Set([v.parsedPath, legacyColumnsRelativePath(v.sha256)])) {
      if (old && old !== arrow) await removeQuietly(absoluteStorePath(old));
    }
    console.info(
      `Dataset columns: version ${v.version} (${v.fileName}, SHA-256 ${v.sha256.slice(0, 12)}…) now stored as Arrow IPC (${arrow}).`,
    );
    return arrow;
  })();
  inFlight.set(v.id, work);
  work.finally(() => inFlight.delete(v.id)).catch(() => undefined);
  return work;
}

/**
 * Migrates every version still in the former format, one at a time (locked versions first).
 * A version that cannot be migrated is logged and left as it is; the others go on.
 */
export async function migrateStoredColumns(): Promise<{ migrated: number; failed: string[] }> {
  const pending = await db
    .select()
    .from(t.datasetVersions)
    .where(or(like(t.datasetVersions.parsedPath, "%.cols"), isNull(t.datasetVersions.parsedPath)));
  const all = pending.sort((a, b) => Number(b.status === "locked") - Number(a.status === "locked"));
  if (all.length > 0)
    console.info(
      `Dataset columns: ${all.length} stored version(s) in the former columns format; writing Arrow IPC files.`,
    );
  let migrated = 0;
  const failed: string[] = [];
  for (const v of all) {
    try {
      await migrateVersionColumns(v);
      migrated++;
    } catch (e) {
      const message = e instanceof Error ? e.message : String(e);
      failed.push(message);
      console.error(`Dataset columns: ${message}`);
    }
  }
  return { migrated, failed };
}

/**
 * The typed columns of a version, migrating it first when it is still in the former format (or
 * rebuilding its Arrow file from the original bytes when that file has gone missing).
 */
export async function storedColumnsOf(v: VersionRow): Promise<StoredColumns> {
  return readArrowColumnsCached(await columnsFileOf(v));
}

/** The absolute path of a version's Arrow columns file, migrating the version first when needed. */
export async function columnsFileOf(v: VersionRow): Promise<string> {
  const relative = needsArrow(v) ? await migrateVersionColumns(v) : (v.parsedPath as string);
  return absoluteStorePath(relative);
}
