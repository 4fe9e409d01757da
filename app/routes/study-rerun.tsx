import { useEffect } from "react";
import { Link, useNavigation, useRevalidator } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-rerun";
import { Caution } from "~/components/caution";
import { FigureWorkerStart } from "~/components/figures/figure-worker-start";
import type { HeadStartHandle } from "~/components/head-start";
import { PageHeader } from "~/components/page";
import { StatusLabel } from "~/components/status";
import { FindingsSection } from "~/components/rerun/findings-section";
import { ModelResults } from "~/components/rerun/model-results";
import { pageFigureUrls } from "~/components/rerun/page-figures";
import { Provenance } from "~/components/rerun/provenance";
import { RunFailure } from "~/components/rerun/run-failure";
import { RunProgress } from "~/components/rerun/run-progress";
import { RERUN_STATUS } from "~/shared/status-words";
import { SensitivitySection } from "~/components/rerun/sensitivity-section";
import { SignOff } from "~/components/rerun/sign-off";
import { SENSITIVITY_KINDS } from "~/.server/plans/planned-model";
import { resultsPage } from "~/.server/reruns/results-page.server";
import {
  recordAssessment,
  rerunAgain,
  runPlannedSensitivity,
  saveWhatIf,
  signResults,
  type ResultsActionResult,
} from "~/.server/reruns/results-actions.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Rerun ${loaderData?.model.key ?? ""} · ${loaderData?.code ?? ""} · Plumbline` }];
}

/** The figure worker starts in the head, so it fetches every figure as the HTML begins to arrive. */
export const handle: HeadStartHandle = {
  headStart: (data) => {
    const { view, studyId, rerun } = data as Route.ComponentProps["loaderData"];
    return view ? <FigureWorkerStart figures={pageFigureUrls(view, studyId, rerun.id)} /> : null;
  },
};

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireStudy(request, params.studyId, "rerun.view");
  return resultsPage(request, access, params.rerunId);
}

const Intent = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("again") }),
  z.object({ intent: z.literal("sensitivity"), kind: z.enum(SENSITIVITY_KINDS) }),
  z.object({ intent: z.literal("assess"), findingId: z.string().min(1) }).passthrough(),
  z.object({ intent: z.literal("deviation") }).passthrough(),
  z.object({ intent: z.literal("sign") }),
  z.object({
    intent: z.literal("whatif-save"),
    rows: z.string().regex(/^\d+(,\d+)*$/, "Choose at least one subject."),
  }),
]);

export async function action({ request, params }: Route.ActionArgs): Promise<ResultsActionResult | Response> {
  const form = Object.fromEntries(await request.formData());
  const parsed = Intent.safeParse(form);
  if (!parsed.success)
    return { error: parsed.error.issues[0]?.message ?? "That request was not understood.", fieldErrors: {} };
  const input = parsed.data;
  const needed =
    input.intent === "sign"
      ? "rerun.sign"
      : input.intent === "assess" || input.intent === "deviation"
        ? "finding.assess"
        : "rerun.start";
  const access = await requireStudy(request, params.studyId, needed);
  switch (input.intent) {
    case "again":
      return rerunAgain(access, params.rerunId);
    case "sensitivity":
      return runPlannedSensitivity(access, params.rerunId, input.kind);
    case "whatif-save":
      return saveWhatIf(access, params.rerunId, input.rows);
    case "assess":
      return recordAssessment(access, params.rerunId, form, input.findingId);
    case "deviation":
      return recordAssessment(access, params.rerunId, form);
    case "sign":
      return signResults(access, params.rerunId);
  }
}

export default function RerunPage({ loaderData, actionData }: Route.ComponentProps) {
  const { rerun, view, findings, can, studyId, comparison } = loaderData;
  const navigation = useNavigation();
  const revalidator = useRevalidator();
  const busy = navigation.state !== "idle";
  const running = rerun.status === "queued" || rerun.status === "running";
  // the planned sensitivity analyses run after the primary: keep polling while any of them is under way
  const sensitivityRunning = loaderData.plannedSensitivity.some(
    (s) => s.status === "queued" || s.status === "running",
  );
  useEffect(() => {
    if (!running && !sensitivityRunning) return;
    const timer = setInterval(
      () => {
        if (revalidator.state === "idle") void revalidator.revalidate();
      },
      running ? 500 : 1000,
    );
    return () => clearInterval(timer);
  }, [running, sensitivityRunning, revalidator]);
  const errorsFor = (target: string) =>
    actionData && "target" in actionData && actionData.target === target ? actionData.fieldErrors : {};
  const open = findings.filter((f) => !f.assessment).length;
  const status = RERUN_STATUS[rerun.status];

  return (
    <>
      <PageHeader
        eyebrow={`${loaderData.code} · rerun${rerun.kind === "sensitivity" ? " · sensitivity analysis" : ""}`}
        title={`${loaderData.model.key} · ${loaderData.model.title}`}
      >
        <StatusLabel status={status.status} word={status.word} />
        {rerun.signedAt ? <StatusLabel status="within" word="Signed" /> : null}
      </PageHeader>
      {actionData && "error" in actionData && actionData.error ? (
        <p role="alert" className="mb-4 rounded-sm border border-finding bg-sheet p-3 text-sm text-finding">
          {actionData.error}
        </p>
      ) : null}
      {rerun.kind === "sensitivity" ? (
        <p className="mb-4 text-sm">
          {rerun.label}
          {rerun.prespecified ? "" : " · not pre-specified"} ·{" "}
          <Link to={`/studies/${studyId}/reruns/${rerun.parentRerunId}`}>back to the primary rerun</Link>
        </p>
      ) : null}
      <Provenance
        studyId={studyId}
        rerun={rerun}
        dataset={loaderData.dataset}
        planVersion={loaderData.planVersion}
        startedBy={loaderData.startedBy}
        twins={loaderData.twins}
        canRerun={can.start && rerun.status === "completed"}
        busy={busy}
      />
      {running ? <RunProgress queued={rerun.status === "queued"} /> : null}
      {rerun.status === "failed" ? <RunFailure reason={rerun.failureReason} /> : null}
      {view ? <ModelResults view={view} studyId={studyId} rerunId={rerun.id} /> : null}
      {rerun.kind === "primary" && (view || rerun.status === "failed") ? (
        <FindingsSection findings={findings} canAssess={can.assess} errorsFor={errorsFor} busy={busy} />
      ) : null}
      {rerun.kind === "primary" && view ? (
        <SensitivitySection
          studyId={studyId}
          planned={loaderData.plannedSensitivity}
          comparison={comparison}
          forests={loaderData.forests}
          whatIf={loaderData.whatIf}
          canStart={can.start}
          signed={Boolean(rerun.signedAt)}
          running={running}
          busy={busy}
        />
      ) : null}
      {rerun.kind === "primary" && rerun.status !== "queued" && rerun.status !== "running" ? (
        <SignOff
          signatures={loaderData.signatures}
          verdict={can.sign}
          signing={loaderData.signing}
          open={open}
          busy={busy}
        />
      ) : null}
      <Caution className="mt-8" />
    </>
  );
}
