import { useState } from "react";
import { Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-reruns";
import { EmptyState, PageHeader } from "~/components/page";
import { StatusLabel } from "~/components/status";
import { RERUN_STATUS, type StatusWord } from "~/shared/status-words";
import { actorOf } from "~/.server/people.server";
import { rerunChoices } from "~/.server/reruns/rerun-choices.server";
import { listReruns, startRerun } from "~/.server/reruns/reruns.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Reruns · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, allowed } = await requireStudy(request, params.studyId, "rerun.view");
  const [reruns, choices] = await Promise.all([listReruns(study.id), rerunChoices(study.id)]);
  return {
    studyId: study.id,
    code: study.code,
    canStart: allowed.has("rerun.start"),
    reruns: reruns.filter((r) => r.kind === "primary"),
    sensitivityCount: Object.fromEntries(
      reruns
        .filter((r) => r.parentRerunId)
        .reduce(
          (m, r) => m.set(r.parentRerunId!, (m.get(r.parentRerunId!) ?? 0) + 1),
          new Map<string, number>(),
        ),
    ),
    choices,
  };
}

const Start = z.object({
  plannedModelId: z.string().min(1, "Choose a planned model."),
  datasetVersionId: z.string().min(1, "Choose a locked dataset version."),
});

export async function action({ request, params }: Route.ActionArgs) {
  const { study, user } = await requireStudy(request, params.studyId, "rerun.start");
  const parsed = Start.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return { error: parsed.error.issues[0].message };
  const id = await startRerun(actorOf(user), study.id, { ...parsed.data, options: { variant: "planned" } });
  return redirect(`/studies/${study.id}/reruns/${id}`);
}

const STATUS: Record<string, StatusWord> = RERUN_STATUS;

export default function Reruns({ loaderData, actionData }: Route.ComponentProps) {
  const { reruns, choices, canStart, studyId, code } = loaderData;
  const navigation = useNavigation();
  return (
    <>
      <PageHeader eyebrow={code} title="Reruns" />
      <div className="grid gap-6 xl:grid-cols-[1fr_22rem]">
        <section className="min-w-0">
          {reruns.length === 0 ? (
            <EmptyState title="No reruns yet">
              <p>
                Once a plan version is approved and a dataset version is locked, a biostatistician reruns each
                planned model here and sees every check end as within plan or as a finding.
              </p>
            </EmptyState>
          ) : (
            <table className="data-table panel">
              <thead>
                <tr>
                  <th scope="col">Planned model</th>
                  <th scope="col">Data</th>
                  <th scope="col">Status</th>
                  <th scope="col" className="text-right">
                    Findings
                  </th>
                  <th scope="col" className="text-right">
                    Sensitivity
                  </th>
                  <th scope="col">Signed</th>
                  <th scope="col">Started (UTC)</th>
                </tr>
              </thead>
              <tbody>
                {reruns.map((r) => (
                  <tr key={r.id}>
                    <td>
                      <Link to={`/studies/${studyId}/reruns/${r.id}`} className="font-medium">
                        {r.modelKey} · {r.modelTitle}
                      </Link>
                      <span className="block text-xs text-ink-soft">plan v{r.planVersion}</span>
                    </td>
                    <td className="text-xs">
                      {r.datasetName} v{r.datasetVersion}
                    </td>
                    <td>
                      <StatusLabel status={STATUS[r.status].status} word={STATUS[r.status].word} />
                    </td>
                    <td className="num text-right">
                      {r.status === "completed" || r.status === "failed" ? r.findings : "—"}
                    </td>
                    <td className="num text-right">{loaderData.sensitivityCount[r.id] ?? 0}</td>
                    <td className="text-xs">
                      {r.signedAt ? r.signedAt.slice(0, 16).replace("T", " ") : "not yet"}
                    </td>
                    <td className="num text-xs whitespace-nowrap">
                      {r.createdAt.slice(0, 16).replace("T", " ")}
                      <span className="block text-ink-soft">{r.startedBy}</span>
                    </td>
                  </tr>
                ))}
              </tbody>
            </table>
          )}
        </section>
        {canStart ? (
          <section className="panel p-4">
            <h2 className="mb-3">Start a rerun</h2>
            {choices.length === 0 ? (
              <p className="text-sm text-ink-soft">
                There is no approved planned model yet. Approve a plan version first.
              </p>
            ) : (
              <Form method="post" className="space-y-3">
                <StartFields choices={choices} />
                {actionData?.error ? (
                  <p role="alert" className="text-sm text-finding">
                    {actionData.error}
                  </p>
                ) : null}
                <button type="submit" className="btn" disabled={navigation.state === "submitting"}>
                  Rerun
                </button>
              </Form>
            )}
          </section>
        ) : null}
      </div>
    </>
  );
}

function StartFields({
  choices,
}: {
  choices: { id: string; label: string; versions: { id: string; label: string }[] }[];
}) {
  const [modelId, setModelId] = useState(choices[0]?.id ?? "");
  const versions = choices.find((c) => c.id === modelId)?.versions ?? [];
  return (
    <>
      <div>
        <label htmlFor="rr-model" className="label">
          Approved planned model
        </label>
        <select
          id="rr-model"
          name="plannedModelId"
          className="field"
          value={modelId}
          onChange={(e) => setModelId(e.target.value)}
        >
          {choices.map((c) => (
            <option key={c.id} value={c.id}>
              {c.label}
            </option>
          ))}
        </select>
      </div>
      <div>
        <label htmlFor="rr-data" className="label">
          Locked dataset version
        </label>
        <select
          id="rr-data"
          name="datasetVersionId"
          className="field"
          key={modelId}
          defaultValue={versions[versions.length - 1]?.id}
        >
          {versions.map((v) => (
            <option key={v.id} value={v.id}>
              {v.label}
            </option>
          ))}
        </select>
        {versions.length === 0 ? (
          <p className="mt-1 text-xs text-finding">No locked version of this model's dataset.</p>
        ) : null}
      </div>
    </>
  );
}
