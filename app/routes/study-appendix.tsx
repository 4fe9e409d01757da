import { Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-appendix";
import { Caution } from "~/components/caution";
import { EmptyState, PageHeader } from "~/components/page";
import { ChooseAndExport } from "~/components/appendix/choose-and-export";
import { PreviousExports } from "~/components/appendix/previous-exports";
import { Preview } from "~/components/appendix/preview";
import { appendixPage } from "~/.server/appendix/appendix-page.server";
import {
  exportWordAppendix,
  narrate,
  type AppendixActionResult,
} from "~/.server/appendix/appendix-actions.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Appendix · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireStudy(request, params.studyId, "appendix.export");
  return appendixPage(new URL(request.url), access);
}

const Intent = z.discriminatedUnion("intent", [
  z.object({
    intent: z.literal("narrate"),
    planVersionId: z.string().min(1),
    section: z.string(),
    body: z.string(),
  }),
  z.object({ intent: z.literal("export"), scope: z.enum(["rerun", "plan_version"]), id: z.string().min(1) }),
]);

export async function action({ request, params }: Route.ActionArgs): Promise<AppendixActionResult> {
  const parsed = Intent.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success)
    return { ok: false, message: "That request was not understood. Reload the page and try again." };
  const input = parsed.data;
  const access = await requireStudy(
    request,
    params.studyId,
    input.intent === "narrate" ? "appendix.narrate" : "appendix.export",
  );
  if (input.intent === "narrate") return narrate(access, input.planVersionId, input.section, input.body);
  return exportWordAppendix(
    access,
    input.scope === "rerun"
      ? { kind: "rerun", rerunId: input.id }
      : { kind: "plan_version", planVersionId: input.id },
  );
}

export default function Page({ loaderData, actionData }: Route.ComponentProps) {
  const { studyId, code, signed, planVersions, scope, content, images, narratives, canNarrate, exports } =
    loaderData;
  const nav = useNavigation();
  const busy = nav.state !== "idle";
  const exporting = nav.state === "submitting" && nav.formData?.get("intent") === "export";
  const selected = scope
    ? scope.kind === "rerun"
      ? `rerun:${scope.rerunId}`
      : `planVersion:${scope.planVersionId}`
    : "";
  const downloadHref = (id: string) => `/studies/${studyId}/appendix/download?id=${encodeURIComponent(id)}`;
  return (
    <>
      <PageHeader eyebrow={code} title="Word appendix" />
      {signed.length === 0 || !content || !narratives ? (
        <EmptyState title="Nothing to export yet">
          <p>
            When a biostatistician signs a rerun, the medical writer adds the narrative and exports the Word
            appendix for the clinical study report from this page.
          </p>
        </EmptyState>
      ) : (
        <div className="space-y-8">
          <ChooseAndExport
            signed={signed}
            planVersions={planVersions}
            selected={selected}
            exportScope={{
              kind: content.scope.kind,
              id: content.scope.kind === "rerun" ? content.scope.rerunId : content.scope.planVersionId,
            }}
            result={actionData}
            downloadHref={downloadHref}
            busy={busy}
            exporting={exporting}
          />
          <PreviousExports exports={exports} downloadHref={downloadHref} />
          <div>
            <h2 className="mb-1">Preview</h2>
            <p className="mb-4 text-sm text-ink-soft">
              The same content the Word file holds. Only the narrative can be written here; everything else
              comes from the signed results.{" "}
              {content.rerunIds.map((id) => (
                <Link key={id} to={`/studies/${studyId}/reruns/${id}`} className="mr-2">
                  Open the rerun
                </Link>
              ))}
            </p>
            <Preview
              content={content}
              images={images}
              narratives={narratives}
              canNarrate={canNarrate}
              result={actionData}
              busy={busy}
            />
          </div>
          <Caution />
        </div>
      )}
    </>
  );
}
