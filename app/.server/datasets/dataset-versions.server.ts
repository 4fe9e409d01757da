/** Reading dataset versions: the rows, a version within its study, the latest locked one, a version's stored columns. */
import { and, desc, eq } from "drizzle-orm";
import { db, t } from "../db/index.server";
import type { StoredColumns } from "./arrow-columns.server";
import { storedColumnsOf } from "./stored-columns.server";

export type DatasetVersionRow = typeof t.datasetVersions.$inferSelect;
export type ScreenHitRow = typeof t.identifierScreenHits.$inferSelect;

export async function latestLocked(datasetId: string): Promise<DatasetVersionRow | null> {
  const [v] = await db
    .select()
    .from(t.datasetVersions)
    .where(and(eq(t.datasetVersions.datasetId, datasetId), eq(t.datasetVersions.status, "locked")))
    .orderBy(desc(t.datasetVersions.version))
    .limit(1);
  return v ?? null;
}

export function parsedOf(v: DatasetVersionRow): Promise<StoredColumns> {
  if (v.purgedAt)
    throw new Error(`Version ${v.version} was purged on ${v.purgedAt}; its files are no longer stored.`);
  return storedColumnsOf(v);
}

export async function versionInStudy(
  studyId: string,
  versionId: string,
): Promise<{ d: typeof t.datasets.$inferSelect; v: DatasetVersionRow } | null> {
  const [row] = await db
    .select({ d: t.datasets, v: t.datasetVersions })
    .from(t.datasetVersions)
    .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
    .where(and(eq(t.datasetVersions.id, versionId), eq(t.datasets.studyId, studyId)))
    .limit(1);
  return row ?? null;
}
