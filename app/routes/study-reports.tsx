import type { Route } from "./+types/study-reports";
import { EmptyState, PageHeader } from "~/components/page";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Reports · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "report.view");
  return { code: study.code };
}

export default function Page({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader eyebrow={loaderData.code} title="Reports" />
      <EmptyState title="No published reports">
        <p>A report appears here when a second biostatistician signs a rerun. Sponsor readers see the signed results, the checks, the deviations and the appendix; never subject-level rows.</p>
      </EmptyState>
    </>
  );
}
