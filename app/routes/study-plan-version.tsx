import { Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-plan-version";
import { FieldError, PageHeader } from "~/components/page";
import { PlannedModelSummary } from "~/components/planned-model-summary";
import { StatusLabel } from "~/components/status";
import { actorOf } from "~/.server/people.server";
import { comparePlanVersions } from "~/.server/plans/plan-diff";
import { plannedModelView } from "~/.server/plans/plan-view";
import {
  approvePlanVersion,
  getPlanVersion,
  PlanConflict,
  PlanHeader,
  previousVersionId,
  removePlannedModel,
  returnPlanVersion,
  startNextVersion,
  STATUS_LABELS,
  submitForApproval,
  updatePlanHeader,
} from "~/.server/plans/plans.server";
import { requireStudy } from "~/.server/study-access.server";
import {
  freshness,
  reauthenticationPath,
  reauthNotice,
  recordedSignature,
  SIGNATURE_MEANINGS,
  SignatureRefused,
} from "~/.server/signatures.server";
import { ReauthNotice, SigningExplainer } from "~/components/signing";

export function meta({ loaderData }: Route.MetaArgs) {
  return [
    { title: `${loaderData?.version.title ?? "Plan"} v${loaderData?.version.version ?? ""} · Plumbline` },
  ];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, user, allowed } = await requireStudy(request, params.studyId, "plan.view");
  const pv = await getPlanVersion(study.id, params.versionId);
  const prevId = await previousVersionId(pv.plan.id, pv.version.version);
  const prev = prevId ? await getPlanVersion(study.id, prevId) : null;
  const editors = JSON.parse(pv.version.editorIdsJson) as string[];
  const changes = prev
    ? comparePlanVersions(
        { header: prev.version, models: prev.models },
        { header: pv.version, models: pv.models },
      )
    : null;
  return {
    studyId: study.id,
    code: study.code,
    version: pv.version,
    statusLabel: STATUS_LABELS[pv.version.status],
    authorName: pv.authorName,
    approverName: pv.approverName,
    editors: pv.editors,
    models: pv.models.map(plannedModelView),
    previous: prev ? { id: prev.version.id, version: prev.version.version } : null,
    changes,
    can: {
      edit: allowed.has("plan.author") && pv.version.status === "draft",
      approve: allowed.has("plan.approve") && pv.version.status === "awaiting_approval",
      approveBlocked: pv.version.authorId === user.id || editors.includes(user.id),
      nextVersion: allowed.has("plan.author") && pv.version.status === "approved",
    },
    signing: { meaning: SIGNATURE_MEANINGS.plan, fresh: freshness(user).ok, notice: reauthNotice(request) },
    approval: pv.version.approvedAt ? await recordedSignature("plan.approve", pv.version.id) : null,
  };
}

const Intent = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("header"), revision: z.coerce.number().int() }).passthrough(),
  z.object({ intent: z.literal("submit"), revision: z.coerce.number().int() }),
  z.object({ intent: z.literal("remove"), revision: z.coerce.number().int(), modelId: z.string().min(1) }),
  z.object({ intent: z.literal("approve") }),
  z.object({
    intent: z.literal("return"),
    note: z.string().trim().min(5, "Say what the author should change.").max(2000),
  }),
  z.object({ intent: z.literal("next") }),
]);

export async function action({ request, params }: Route.ActionArgs) {
  const form = Object.fromEntries(await request.formData());
  const parsed = Intent.safeParse(form);
  if (!parsed.success)
    return {
      error: parsed.error.issues[0]?.message ?? "That request was not understood.",
      fieldErrors: {} as Record<string, string>,
    };
  const input = parsed.data;
  const needed = input.intent === "approve" || input.intent === "return" ? "plan.approve" : "plan.author";
  const { study, user } = await requireStudy(request, params.studyId, needed);
  const actor = actorOf(user);
  try {
    switch (input.intent) {
      case "header": {
        const header = PlanHeader.safeParse(form);
        if (!header.success) {
          const fieldErrors: Record<string, string> = {};
          for (const i of header.error.issues) fieldErrors[String(i.path[0])] ??= i.message;
          return { error: null, fieldErrors };
        }
        await updatePlanHeader(actor, study.id, params.versionId, input.revision, header.data);
        break;
      }
      case "submit":
        await submitForApproval(actor, study.id, params.versionId, input.revision);
        break;
      case "remove":
        await removePlannedModel(actor, study.id, params.versionId, input.revision, input.modelId);
        break;
      case "approve":
        await approvePlanVersion({ ...actor, signedInAt: user.signedInAt }, study.id, params.versionId);
        break;
      case "return":
        await returnPlanVersion(actor, study.id, params.versionId, input.note);
        break;
      case "next": {
        const id = await startNextVersion(actor, study.id, params.versionId);
        return redirect(`/studies/${study.id}/plans/${id}`);
      }
    }
  } catch (e) {
    if (e instanceof PlanConflict) return { error: e.message, fieldErrors: {} as Record<string, string> };
    if (e instanceof SignatureRefused && e.reauthenticate)
      return redirect(reauthenticationPath(`/studies/${study.id}/plans/${params.versionId}#approval`));
    throw e;
  }
  return { error: null, fieldErrors: {} as Record<string, string> };
}

export default function PlanVersionPage({ loaderData, actionData }: Route.ComponentProps) {
  const { version: v, models, can, changes, previous, studyId } = loaderData;
  const navigation = useNavigation();
  const busy = navigation.state !== "idle";
  const fieldErrors = actionData?.fieldErrors ?? {};
  const status = v.status === "approved" ? "within" : v.status === "superseded" ? "pending" : "pending";
  return (
    <>
      <PageHeader eyebrow={`${loaderData.code} · analysis plan`} title={`${v.title} · version ${v.version}`}>
        <StatusLabel status={status} word={loaderData.statusLabel} />
      </PageHeader>
      {actionData?.error ? (
        <p role="alert" className="mb-4 rounded-sm border border-finding bg-sheet p-3 text-sm text-finding">
          {actionData.error}
        </p>
      ) : null}
      {v.returnNote && v.status === "draft" ? (
        <p className="mb-4 rounded-sm border border-rule bg-sheet p-3 text-sm">
          <span className="font-semibold">Returned by the approver:</span> {v.returnNote}
        </p>
      ) : null}

      <div className="grid gap-6 xl:grid-cols-[1fr_20rem]">
        <div className="min-w-0 space-y-4">
          <section className="panel p-4 text-sm">
            <dl className="grid grid-cols-[9rem_1fr] gap-x-3 gap-y-1">
              <dt className="font-semibold text-ink-soft">SAP document</dt>
              <dd>
                {v.sapName} · version {v.sapVersion} · {v.sapDate}
              </dd>
              <dt className="font-semibold text-ink-soft">Author</dt>
              <dd>{loaderData.authorName}</dd>
              <dt className="font-semibold text-ink-soft">Edited by</dt>
              <dd>{loaderData.editors.join(", ") || "—"}</dd>
              <dt className="font-semibold text-ink-soft">Approved</dt>
              <dd data-testid="plan-approval">
                {v.approvedAt
                  ? `${loaderData.approval?.signedBy ?? loaderData.approverName} · ${v.approvedAt.slice(0, 16).replace("T", " ")} UTC${loaderData.approval?.meaning ? ` · “${loaderData.approval.meaning}”` : ""}`
                  : "not yet"}
              </dd>
            </dl>
          </section>

          <div className="flex items-center justify-between">
            <h2>Planned models</h2>
            {can.edit ? (
              <Link
                to={`/studies/${studyId}/plans/${v.id}/models/new`}
                className="btn no-underline hover:no-underline"
              >
                Add a planned model
              </Link>
            ) : null}
          </div>
          {models.length === 0 ? (
            <p className="panel p-4 text-sm text-ink-soft">
              No planned models yet.{" "}
              {can.edit ? "Add the SAP's first model: its endpoint, treatment, covariates and checks." : ""}
            </p>
          ) : (
            models.map((m) => (
              <PlannedModelSummary
                key={m.id}
                m={m}
                actions={
                  can.edit ? (
                    <div className="flex items-center gap-2">
                      <Link
                        to={`/studies/${studyId}/plans/${v.id}/models/${m.id}`}
                        className="btn-quiet no-underline hover:no-underline"
                      >
                        Edit
                      </Link>
                      <Form method="post">
                        <input type="hidden" name="intent" value="remove" />
                        <input type="hidden" name="revision" value={v.revision} />
                        <input type="hidden" name="modelId" value={m.id} />
                        <button type="submit" className="btn-quiet" disabled={busy}>
                          Remove
                        </button>
                      </Form>
                    </div>
                  ) : null
                }
              />
            ))
          )}

          {changes ? (
            <section className="panel p-4">
              <h2 className="mb-2 text-base">Changes since version {previous?.version}</h2>
              {changes.length === 0 ? (
                <p className="text-sm text-ink-soft">No changes yet.</p>
              ) : (
                <table className="data-table">
                  <thead>
                    <tr>
                      <th scope="col">Where</th>
                      <th scope="col">Change</th>
                    </tr>
                  </thead>
                  <tbody>
                    {changes.map((c, i) => (
                      <tr key={i}>
                        <td className="whitespace-nowrap">{c.where}</td>
                        <td>{c.what}</td>
                      </tr>
                    ))}
                  </tbody>
                </table>
              )}
            </section>
          ) : null}
        </div>

        <aside className="space-y-4">
          {can.edit ? (
            <>
              <section className="panel p-4">
                <h2 className="mb-2 text-base">Ready for review?</h2>
                <p className="mb-3 text-sm text-ink-soft">
                  Submitting asks a second biostatistician, who has not edited this version, to approve it.
                  Approval freezes it.
                </p>
                <Form method="post">
                  <input type="hidden" name="intent" value="submit" />
                  <input type="hidden" name="revision" value={v.revision} />
                  <button type="submit" className="btn" disabled={busy || models.length === 0}>
                    Submit for approval
                  </button>
                </Form>
              </section>
              <section className="panel p-4">
                <h2 className="mb-2 text-base">Plan details</h2>
                <Form method="post" className="space-y-2" noValidate>
                  <input type="hidden" name="intent" value="header" />
                  <input type="hidden" name="revision" value={v.revision} />
                  {(
                    [
                      ["title", "Title", "text", v.title],
                      ["sapName", "SAP document", "text", v.sapName ?? ""],
                      ["sapVersion", "SAP version", "text", v.sapVersion ?? ""],
                      ["sapDate", "SAP date", "date", v.sapDate ?? ""],
                    ] as const
                  ).map(([name, label, type, value]) => (
                    <div key={name}>
                      <label htmlFor={`h-${name}`} className="label">
                        {label}
                      </label>
                      <input
                        id={`h-${name}`}
                        name={name}
                        type={type}
                        defaultValue={value}
                        className="field"
                        aria-invalid={fieldErrors[name] ? true : undefined}
                      />
                      <FieldError id={`h-${name}-error`} message={fieldErrors[name]} />
                    </div>
                  ))}
                  <button type="submit" className="btn-quiet" disabled={busy}>
                    Save details
                  </button>
                </Form>
              </section>
            </>
          ) : null}
          {can.approve ? (
            <section id="approval" className="panel p-4">
              <h2 className="mb-2 text-base">Approval</h2>
              <ReauthNotice notice={loaderData.signing.notice} />
              {can.approveBlocked ? (
                <p className="text-sm">
                  You wrote or edited this version, so a second biostatistician must approve it (two-person
                  rule).
                </p>
              ) : (
                <>
                  <Form method="post" className="mb-4">
                    <SigningExplainer
                      act="Approving"
                      meaning={loaderData.signing.meaning}
                      fresh={loaderData.signing.fresh}
                    />
                    <input type="hidden" name="intent" value="approve" />
                    <button type="submit" className="btn" disabled={busy}>
                      Approve version {v.version}
                    </button>
                  </Form>
                  <Form method="post" className="space-y-2">
                    <input type="hidden" name="intent" value="return" />
                    <label htmlFor="return-note" className="label">
                      Or return it to the author with a note
                    </label>
                    <textarea
                      id="return-note"
                      name="note"
                      rows={3}
                      className="field"
                      required
                      minLength={5}
                    />
                    <button type="submit" className="btn-quiet" disabled={busy}>
                      Return to author
                    </button>
                  </Form>
                </>
              )}
            </section>
          ) : null}
          {can.nextVersion ? (
            <section className="panel p-4">
              <h2 className="mb-2 text-base">Change the plan</h2>
              <p className="mb-3 text-sm text-ink-soft">
                An approved version never changes. Start version {v.version + 1} as a copy, edit it and have
                it approved.
              </p>
              <Form method="post">
                <input type="hidden" name="intent" value="next" />
                <button type="submit" className="btn-quiet" disabled={busy}>
                  Start version {v.version + 1}
                </button>
              </Form>
            </section>
          ) : null}
        </aside>
      </div>
    </>
  );
}
