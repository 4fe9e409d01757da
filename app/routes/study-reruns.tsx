import type { Route } from "./+types/study-reruns";
import { EmptyState, PageHeader } from "~/components/page";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Reruns · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "rerun.view");
  return { code: study.code };
}

export default function Page({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader eyebrow={loaderData.code} title="Reruns" />
      <EmptyState title="No reruns yet">
        <p>Once a plan version is approved and a dataset version is locked, a biostatistician reruns each planned model here and sees every check end as within plan or as a finding.</p>
      </EmptyState>
    </>
  );
}
