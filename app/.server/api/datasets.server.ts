/** API: a study's datasets, their versions and hashes, and column metadata. Never rows. */
import { getVersionDetail, listDatasets, type VersionSummary } from "../datasets/dataset-reads.server";
import { requireStudyForPrincipal } from "../study-access.server";
import { ApiError } from "./respond.server";
import type { Body, DatasetsAnswer, DatasetVersionAnswer } from "./schemas";
import type { ApiPrincipal } from "./tokens.server";

type VersionOut = Body<typeof DatasetVersionAnswer>["version"];

function versionOut(v: VersionSummary): VersionOut {
  return {
    id: v.id,
    version: v.version,
    status: v.status,
    format: v.format,
    fileName: v.fileName,
    byteSize: v.byteSize,
    sha256: v.sha256,
    rowCount: v.rowCount,
    columnCount: v.columnCount,
    uploadedBy: v.uploadedBy,
    uploadedAt: v.uploadedAt,
    lockedBy: v.lockedBy,
    lockedAt: v.lockedAt,
    derivedFromVersion: v.derivedFromVersion,
    removedColumns: v.removedColumns,
  };
}

const finiteOrNull = (x: number | undefined): number | null | undefined =>
  x === undefined ? undefined : Number.isFinite(x) ? x : null;

export async function listStudyDatasets(
  p: ApiPrincipal,
  studyId: string,
): Promise<Body<typeof DatasetsAnswer>> {
  const { study } = await requireStudyForPrincipal(p, studyId, "dataset.view");
  const datasets = await listDatasets(study.id);
  return {
    datasets: datasets.map((d) => ({ id: d.id, name: d.name, versions: d.versions.map(versionOut) })),
  };
}

export async function getDatasetVersion(
  p: ApiPrincipal,
  studyId: string,
  datasetId: string,
  versionId: string,
): Promise<Body<typeof DatasetVersionAnswer>> {
  const { study } = await requireStudyForPrincipal(p, studyId, "dataset.view");
  const detail = await getVersionDetail(study.id, versionId);
  if (!detail || detail.datasetId !== datasetId)
    throw new ApiError("not_found", "There is no such version of this dataset in this study.");
  const keys = new Set(detail.keyColumns);
  return {
    dataset: { id: detail.datasetId, name: detail.datasetName },
    version: versionOut(detail.version),
    keyColumns: detail.keyColumns,
    columns: detail.columns.map((c) => ({
      name: c.name,
      label: c.label,
      type: c.type,
      nonMissing: c.nonMissing,
      missing: c.missing,
      min: finiteOrNull(c.min),
      max: finiteOrNull(c.max),
      mean: finiteOrNull(c.mean),
      sd: finiteOrNull(c.sd),
      earliest: c.earliest,
      latest: c.latest,
      // A subject identifier's "levels" would be the subjects themselves.
      levels: keys.has(c.name) ? undefined : c.levels,
    })),
  };
}
