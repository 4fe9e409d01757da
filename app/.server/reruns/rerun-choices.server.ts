/**
 * What the reruns page offers to rerun: each planned model of the study's approved plan
 * versions (as `approvedModels` lists them, in plan order) with the locked versions of its
 * dataset (as `listLockedVersions` lists them, by dataset name and version). Only the names,
 * versions and hashes the form shows are read: the page is opened often, and parsing every
 * model's specification and every version's column descriptions to show a label cost most of
 * its loader's time.
 */
import { and, asc, eq, sql } from "drizzle-orm";
import { db, t } from "../db/index.server";

export interface RerunChoice {
  id: string;
  label: string;
  versions: { id: string; label: string }[];
}

/** Both queries are built once (prepared). */
const approvedModelNames = db
  .select({
    id: t.plannedModels.id,
    key: t.plannedModels.key,
    title: t.plannedModels.title,
    datasetName: t.plannedModels.datasetName,
    planVersion: t.planVersions.version,
  })
  .from(t.plannedModels)
  .innerJoin(t.planVersions, eq(t.planVersions.id, t.plannedModels.planVersionId))
  .innerJoin(t.analysisPlans, eq(t.analysisPlans.id, t.planVersions.planId))
  .where(and(eq(t.analysisPlans.studyId, sql.placeholder("studyId")), eq(t.planVersions.status, "approved")))
  .orderBy(asc(t.plannedModels.position))
  .prepare();
const lockedVersionNames = db
  .select({
    versionId: t.datasetVersions.id,
    version: t.datasetVersions.version,
    sha256: t.datasetVersions.sha256,
    datasetName: t.datasets.name,
  })
  .from(t.datasetVersions)
  .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
  .where(and(eq(t.datasets.studyId, sql.placeholder("studyId")), eq(t.datasetVersions.status, "locked")))
  .orderBy(asc(t.datasets.name), asc(t.datasetVersions.version))
  .prepare();

export async function rerunChoices(studyId: string): Promise<RerunChoice[]> {
  const [models, locked] = await Promise.all([
    approvedModelNames.all({ studyId }),
    lockedVersionNames.all({ studyId }),
  ]);
  return models.map((m) => ({
    id: m.id,
    label: `${m.key} · ${m.title} (plan v${m.planVersion})`,
    versions: locked
      .filter((v) => v.datasetName === m.datasetName)
      .map((v) => ({ id: v.versionId, label: `${v.datasetName} v${v.version} · ${v.sha256.slice(0, 12)}…` })),
  }));
}
