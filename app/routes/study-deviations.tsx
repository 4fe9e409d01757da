import type { Route } from "./+types/study-deviations";
import { EmptyState, PageHeader } from "~/components/page";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Deviation log · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "deviation.view");
  return { code: study.code };
}

export default function Page({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader eyebrow={loaderData.code} title="Deviation log" />
      <EmptyState title="No deviations recorded">
        <p>Every finding a biostatistician assesses, and every departure from the plan, is logged here with its impact on the treatment conclusion and the action taken.</p>
      </EmptyState>
    </>
  );
}
