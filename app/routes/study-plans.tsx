import type { Route } from "./+types/study-plans";
import { EmptyState, PageHeader } from "~/components/page";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Analysis plans · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "plan.view");
  return { code: study.code };
}

export default function Page({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader eyebrow={loaderData.code} title="Analysis plans" />
      <EmptyState title="No analysis plan yet">
        <p>A biostatistician writes the analysis plan here: the planned models of the SAP and, for each, the diagnostic checks with their thresholds. A second biostatistician approves it, which freezes that version.</p>
      </EmptyState>
    </>
  );
}
