import { Link } from "react-router";
import type { Route } from "./+types/study-reports";
import { Caution } from "~/components/caution";
import { utc } from "~/shared/format";
import { EmptyState, PageHeader } from "~/components/page";
import { listReports } from "~/.server/reports/reports.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Reports · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "report.view");
  return { studyId: study.id, code: study.code, reports: await listReports(study.id) };
}

export default function Page({ loaderData }: Route.ComponentProps) {
  const { reports, studyId, code } = loaderData;
  return (
    <>
      <PageHeader eyebrow={code} title="Reports" />
      {reports.length === 0 ? (
        <EmptyState title="No published reports">
          <p>
            A report appears here when a second biostatistician signs a rerun. Sponsor readers see the signed
            results, the checks, the deviations and the appendix; never subject-level rows.
          </p>
        </EmptyState>
      ) : (
        <table className="data-table panel">
          <caption className="mb-1 text-left text-xs text-ink-soft">
            Signed reruns published to the study's readers, newest first.
          </caption>
          <thead>
            <tr>
              <th scope="col">Planned model</th>
              <th scope="col">Dataset</th>
              <th scope="col" className="text-right">
                Plan version
              </th>
              <th scope="col" className="text-right">
                Findings
              </th>
              <th scope="col" className="text-right">
                Sensitivity analyses
              </th>
              <th scope="col">Signed by</th>
              <th scope="col">Published</th>
            </tr>
          </thead>
          <tbody>
            {reports.map((r) => (
              <tr key={r.id}>
                <td>
                  <Link to={`/studies/${studyId}/reports/${r.id}`}>
                    {r.modelKey} · {r.modelTitle}
                  </Link>
                </td>
                <td>
                  {r.datasetName} v{r.datasetVersion}
                </td>
                <td className="num text-right">{r.planVersion}</td>
                <td className="num text-right">{r.findings}</td>
                <td className="num text-right">{r.sensitivity}</td>
                <td>{r.signers.join(", ")}</td>
                <td className="num whitespace-nowrap">{utc(r.publishedAt)}</td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
      <Caution className="mt-8" />
    </>
  );
}
