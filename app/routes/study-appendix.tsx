import type { Route } from "./+types/study-appendix";
import { EmptyState, PageHeader } from "~/components/page";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Appendix · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "appendix.export");
  return { code: study.code };
}

export default function Page({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader eyebrow={loaderData.code} title="Appendix" />
      <EmptyState title="Nothing to export yet">
        <p>When a rerun is signed, the medical writer adds the narrative and exports the Word appendix for the clinical study report from this page.</p>
      </EmptyState>
    </>
  );
}
