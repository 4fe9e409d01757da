/**
 * What other parts of Plumbline read about datasets: the locked versions of a study and their
 * parsed columns, ready for a rerun. Only locked versions are offered; drafts never leave the
 * datasets service.
 */
import { and, asc, eq } from "drizzle-orm";
import { db, t } from "../db/index.server";
import type { ColumnMeta } from "./column-summary";
import { readColumnsFileCached } from "./columns-file.server";
import { absoluteStorePath } from "./store.server";

export type { ColumnMeta } from "./column-summary";

export interface LockedVersion {
  datasetId: string;
  datasetName: string;
  versionId: string;
  version: number;
  sha256: string;
  rowCount: number;
  lockedAt: string;
  columns: ColumnMeta[];
}

/** The engine's ColumnTable input: cells as text (missing = "", "NA" or "."), 1-based data row numbers. */
export interface LockedTable {
  table: { columns: Record<string, string[]>; rowNumbers: number[] };
  sha256: string;
  columns: ColumnMeta[];
}

/** Every locked version of every dataset of the study, by dataset name then version. */
export async function listLockedVersions(studyId: string): Promise<LockedVersion[]> {
  const rows = await db
    .select({ d: t.datasets, v: t.datasetVersions })
    .from(t.datasetVersions)
    .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
    .where(and(eq(t.datasets.studyId, studyId), eq(t.datasetVersions.status, "locked")))
    .orderBy(asc(t.datasets.name), asc(t.datasetVersions.version));
  return rows.map(({ d, v }) => ({
    datasetId: d.id,
    datasetName: d.name,
    versionId: v.id,
    version: v.version,
    sha256: v.sha256,
    rowCount: v.rowCount,
    lockedAt: v.lockedAt ?? "",
    columns: JSON.parse(v.columnsJson) as ColumnMeta[],
  }));
}

export class DatasetNotFoundError extends Error {}

/**
 * The parsed columns of a locked version, read from the store (no parsing of the original file).
 * Throws DatasetNotFoundError when the id names no locked version.
 */
export async function loadLockedTable(versionId: string): Promise<LockedTable> {
  const [v] = await db.select().from(t.datasetVersions).where(eq(t.datasetVersions.id, versionId)).limit(1);
  if (!v || v.status !== "locked") {
    throw new DatasetNotFoundError(`There is no locked dataset version with the id "${versionId}". Lock the version first, then rerun.`);
  }
  if (!v.parsedPath) throw new Error(`Dataset version ${v.version} has no parsed columns in the store; upload the file again.`);
  const parsed = await readColumnsFileCached(absoluteStorePath(v.parsedPath));
  const columns: Record<string, string[]> = {};
  parsed.names.forEach((name, i) => (columns[name] = parsed.cells[i]));
  return { table: { columns, rowNumbers: parsed.rowNumbers }, sha256: v.sha256, columns: JSON.parse(v.columnsJson) as ColumnMeta[] };
}
