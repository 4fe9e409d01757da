import { Link } from "react-router";
import type { Route } from "./+types/study-datasets";
import { UploadForm } from "~/components/datasets/upload-form";
import { VersionStatus } from "~/components/datasets/version-status";
import { formatBytes, formatCount, formatTime } from "~/components/datasets/format";
import { EmptyState, PageHeader } from "~/components/page";
import { config } from "~/.server/config.server";
import { listDatasets } from "~/.server/datasets/dataset-reads.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Datasets · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, allowed } = await requireStudy(request, params.studyId, "dataset.view");
  return {
    studyId: study.id,
    code: study.code,
    canUpload: allowed.has("dataset.upload"),
    maxBytes: config.DATASET_MAX_BYTES,
    datasets: await listDatasets(study.id),
  };
}

export default function Page({ loaderData }: Route.ComponentProps) {
  const { studyId, code, canUpload, maxBytes, datasets } = loaderData;
  const base = `/studies/${studyId}/datasets`;
  return (
    <>
      <PageHeader eyebrow={code} title="Datasets" />
      <div className={canUpload ? "grid gap-6 xl:grid-cols-[1fr_20rem]" : ""}>
        <div className="space-y-6">
          {datasets.length === 0 ? (
            <EmptyState title="No datasets loaded yet">
              <p>
                The data manager loads the study's locked, de-identified analysis dataset here (CSV or CDISC
                Dataset-JSON). Plumbline checks its types and screens it for direct identifiers before the
                version can be locked.
              </p>
            </EmptyState>
          ) : null}
          {datasets.map((d) => (
            <section key={d.id} aria-labelledby={`ds-${d.id}`} className="panel">
              <h2 id={`ds-${d.id}`} className="border-b border-rule px-3 py-2">
                {d.name}
              </h2>
              <table className="data-table">
                <thead>
                  <tr>
                    <th scope="col">Version</th>
                    <th scope="col">State</th>
                    <th scope="col">File</th>
                    <th scope="col" className="text-right">
                      Rows
                    </th>
                    <th scope="col" className="text-right">
                      Columns
                    </th>
                    <th scope="col">SHA-256</th>
                    <th scope="col">Uploaded</th>
                    <th scope="col">Changes</th>
                  </tr>
                </thead>
                <tbody>
                  {d.versions.map((v) => (
                    <tr key={v.id}>
                      <td className="num font-semibold">
                        <Link to={`${base}/${v.id}`}>v{v.version}</Link>
                      </td>
                      <td>
                        <VersionStatus
                          status={v.status}
                          unresolved={v.unresolvedHits}
                          purged={Boolean(v.purgedAt)}
                        />
                      </td>
                      <td>
                        {v.fileName}{" "}
                        <span className="num text-xs text-ink-soft">{formatBytes(v.byteSize)}</span>
                      </td>
                      <td className="num text-right">{formatCount(v.rowCount)}</td>
                      <td className="num text-right">{v.columnCount}</td>
                      <td className="font-mono text-xs" title={v.sha256}>
                        {v.sha256.slice(0, 12)}…
                      </td>
                      <td className="text-xs">
                        {v.uploadedBy ?? "–"}
                        <br />
                        <span className="num text-ink-soft">{formatTime(v.uploadedAt)}</span>
                      </td>
                      <td className="num text-xs">
                        {v.derivedFromVersion
                          ? `v${v.derivedFromVersion} without ${v.removedColumns.join(", ")}`
                          : null}
                        {!v.derivedFromVersion && v.changes
                          ? `vs v${v.changes.againstVersion}: +${v.changes.rowsAdded} −${v.changes.rowsRemoved} ~${v.changes.rowsChanged} rows`
                          : null}
                        {!v.derivedFromVersion && !v.changes ? (
                          <span className="text-ink-soft">first version</span>
                        ) : null}
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </section>
          ))}
        </div>
        {canUpload ? (
          <aside className="panel h-fit p-4" aria-labelledby="upload-title">
            <h2 id="upload-title" className="mb-3">
              Upload a dataset
            </h2>
            <UploadForm
              action={`${base}/upload`}
              maxBytes={maxBytes}
              datasetNames={datasets.map((d) => d.name)}
              versionUrl={(id) => `${base}/${id}`}
            />
          </aside>
        ) : null}
      </div>
    </>
  );
}
