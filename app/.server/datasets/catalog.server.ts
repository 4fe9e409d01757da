/**
 * What other parts of Plumbline read about datasets: the locked versions of a study and their
 * parsed columns, ready for a rerun. Only locked versions are offered; drafts never leave the
 * datasets service.
 */
import { and, asc, eq } from "drizzle-orm";
import { db, t } from "../db/index.server";
import type { ColumnMeta } from "./column-summary";
import { textOf, type StoredColumns, type TypedColumn } from "./arrow-columns.server";
import { columnsFileOf, storedColumnsOf } from "./stored-columns.server";

export type { ColumnMeta } from "./column-summary";
export type { TypedColumn } from "./arrow-columns.server";

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

/** Typed columns by name: numbers as Float64Array (NaN for missing), text and dates as strings (null for missing). */
export interface TypedTable {
  columns: Record<string, TypedColumn>;
  rowNumbers: number[];
}

export interface LockedTable {
  /** As stored, read straight from the Arrow file: no cell text is parsed. */
  typed: TypedTable;
  /**
   * The engine's ColumnTable input as it is today: cells as text (missing = ""), made from the
   * typed columns one column at a time, on first use of that column.
   */
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
    throw new DatasetNotFoundError(
      `There is no locked dataset version with the id "${versionId}". Lock the version first, then rerun.`,
    );
  }
  const stored = await storedColumnsOf(v);
  const typed: Record<string, TypedColumn> = {};
  stored.names.forEach((name, i) => (typed[name] = stored.columns[i]));
  return {
    typed: { columns: typed, rowNumbers: stored.rowNumbers },
    table: { columns: textColumns(stored), rowNumbers: stored.rowNumbers },
    sha256: v.sha256,
    columns: JSON.parse(v.columnsJson) as ColumnMeta[],
  };
}

/**
 * The Arrow columns file of a locked version (absolute path) and its SHA-256, for work that
 * reads the columns in another thread. Throws DatasetNotFoundError as loadLockedTable does.
 */
export async function lockedColumnsFile(versionId: string): Promise<{ file: string; sha256: string }> {
  const [v] = await db.select().from(t.datasetVersions).where(eq(t.datasetVersions.id, versionId)).limit(1);
  if (!v || v.status !== "locked") {
    throw new DatasetNotFoundError(
      `There is no locked dataset version with the id "${versionId}". Lock the version first, then rerun.`,
    );
  }
  return { file: await columnsFileOf(v), sha256: v.sha256 };
}

/** Cell-text columns that are made from the typed ones only when a caller reads them. */
function textColumns(stored: StoredColumns): Record<string, string[]> {
  const columns: Record<string, string[]> = {};
  stored.names.forEach((name, i) => {
    Object.defineProperty(columns, name, {
      enumerable: true,
      configurable: true,
      get: () => textOf(stored.columns[i]),
    });
  });
  return columns;
}
