import type { Route } from "./+types/study-datasets";
import { EmptyState, PageHeader } from "~/components/page";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Datasets · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "dataset.view");
  return { code: study.code };
}

export default function Page({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader eyebrow={loaderData.code} title="Datasets" />
      <EmptyState title="No datasets loaded yet">
        <p>The data manager loads the study's locked, de-identified analysis dataset here (CSV or CDISC Dataset-JSON). Plumbline checks its types and screens it for direct identifiers before the version can be locked.</p>
      </EmptyState>
    </>
  );
}
