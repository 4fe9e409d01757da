import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-dataset-version";
import { ChangeSummaryPanel } from "~/components/datasets/change-summary";
import { ColumnSummaries } from "~/components/datasets/column-summaries";
import { formatBytes, formatCount, formatTime } from "~/components/datasets/format";
import { PreviewTable } from "~/components/datasets/preview-table";
import { ReadWarnings } from "~/components/datasets/read-warnings";
import { ScreenHits } from "~/components/datasets/screen-hits";
import { VersionStatus } from "~/components/datasets/version-status";
import { PageHeader } from "~/components/page";
import {
  lockVersion,
  purgeRefusal,
  purgeVersion,
  recordNotIdentifier,
  removeFlaggedColumn,
} from "~/.server/datasets/dataset-decisions.server";
import { getVersionDetail } from "~/.server/datasets/dataset-reads.server";
import { PurgeVersion } from "~/components/datasets/purge-version";
import { actorOf } from "~/.server/people.server";
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
    {
      title: loaderData
        ? `${loaderData.detail.datasetName} v${loaderData.detail.version.version} · ${loaderData.code} · Plumbline`
        : "Dataset · Plumbline",
    },
  ];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, allowed, user } = await requireStudy(request, params.studyId, "dataset.view");
  const detail = await getVersionDetail(study.id, params.versionId);
  if (!detail)
    throw data(
      { message: `There is no dataset version "${params.versionId}" in this study.` },
      { status: 404 },
    );
  return {
    studyId: study.id,
    code: study.code,
    detail,
    canRows: allowed.has("dataset.rows"),
    canScreen: allowed.has("dataset.screen"),
    canLock: allowed.has("dataset.lock"),
    signing: {
      meaning: SIGNATURE_MEANINGS.dataset,
      fresh: freshness(user).ok,
      notice: reauthNotice(request),
    },
    lockSignature: detail.version.lockedAt
      ? await recordedSignature("dataset.lock", detail.version.id)
      : null,
    canPurge: allowed.has("dataset.purge") && purgeRefusal(detail.version) === null,
  };
}

const Intent = z.discriminatedUnion("intent", [
  z.object({
    intent: z.literal("not_identifier"),
    hitId: z.string().min(1),
    rationale: z.string().max(2000),
  }),
  z.object({ intent: z.literal("remove_column"), hitId: z.string().min(1) }),
  z.object({ intent: z.literal("lock") }),
  z.object({ intent: z.literal("purge"), confirm: z.literal("yes").optional() }),
]);

export async function action({ request, params }: Route.ActionArgs) {
  const form = Intent.safeParse(Object.fromEntries(await request.formData()));
  if (!form.success)
    throw data({ message: "Unknown request: choose one of the buttons on the page." }, { status: 400 });
  const f = form.data;
  const { user, study } = await requireStudy(
    request,
    params.studyId,
    f.intent === "lock" ? "dataset.lock" : f.intent === "purge" ? "dataset.purge" : "dataset.screen",
  );
  const actor = actorOf(user);
  if (f.intent === "purge") {
    const r = await purgeVersion(actor, study.id, params.versionId, f.confirm === "yes");
    return { errors: r.ok ? ({} as Record<string, string>) : { purge: r.message }, message: null };
  }
  if (f.intent === "not_identifier") {
    const r = await recordNotIdentifier(actor, study.id, f.hitId, f.rationale);
    return r.ok
      ? { errors: {} as Record<string, string>, message: null }
      : { errors: { [f.hitId]: r.message }, message: null };
  }
  if (f.intent === "remove_column") {
    const r = await removeFlaggedColumn(actor, study.id, f.hitId);
    if (r.ok) return redirect(`/studies/${study.id}/datasets/${r.versionId}`);
    return { errors: { [f.hitId]: r.message }, message: null };
  }
  try {
    const r = await lockVersion({ ...actor, signedInAt: user.signedInAt }, study.id, params.versionId);
    return { errors: {} as Record<string, string>, message: r.ok ? null : r.message };
  } catch (e) {
    if (e instanceof SignatureRefused && e.reauthenticate)
      return redirect(reauthenticationPath(`/studies/${study.id}/datasets/${params.versionId}#lock`));
    throw e;
  }
}

export default function Page({ loaderData, actionData }: Route.ComponentProps) {
  const { studyId, code, detail, canRows, canScreen, canLock, canPurge } = loaderData;
  const v = detail.version;
  const navigation = useNavigation();
  const base = `/studies/${studyId}/datasets`;
  return (
    <>
      <PageHeader eyebrow={`${code} · datasets`} title={`${detail.datasetName} · version ${v.version}`}>
        <Link to={base} className="btn-quiet no-underline hover:no-underline">
          All datasets
        </Link>
      </PageHeader>
      {v.datasetLabel ? <p className="-mt-2 mb-4 text-sm text-ink-soft">{v.datasetLabel}</p> : null}
      <div className="mb-6 grid gap-4 lg:grid-cols-[1fr_auto]">
        <dl className="num grid grid-cols-2 gap-x-6 gap-y-1 text-sm sm:grid-cols-4">
          <div>
            <dt className="label">State</dt>
            <dd>
              <VersionStatus status={v.status} unresolved={v.unresolvedHits} purged={Boolean(v.purgedAt)} />
            </dd>
          </div>
          <div>
            <dt className="label">File</dt>
            <dd>
              {v.fileName} ({v.format === "csv" ? "CSV" : v.format === "xpt" ? "XPORT" : "Dataset-JSON"},{" "}
              {formatBytes(v.byteSize)})
            </dd>
          </div>
          <div>
            <dt className="label">Rows × columns</dt>
            <dd>
              {formatCount(v.rowCount)} × {v.columnCount}
            </dd>
          </div>
          <div>
            <dt className="label">Key</dt>
            <dd>{detail.keyColumns.join(", ") || "–"}</dd>
          </div>
          <div className="col-span-2">
            <dt className="label">SHA-256</dt>
            <dd className="break-all font-mono text-xs">{v.sha256}</dd>
          </div>
          <div>
            <dt className="label">Uploaded</dt>
            <dd className="text-xs">
              {v.uploadedBy ?? "–"}, {formatTime(v.uploadedAt)}
            </dd>
          </div>
          <div>
            <dt className="label">Locked</dt>
            <dd className="text-xs" data-testid="dataset-lock">
              {v.lockedAt
                ? `${loaderData.lockSignature?.signedBy ?? v.lockedBy ?? "–"}, ${formatTime(v.lockedAt)}${loaderData.lockSignature ? ` · “${loaderData.lockSignature.meaning}”` : ""}`
                : "not yet"}
            </dd>
          </div>
        </dl>
        {canLock && v.status === "draft" ? (
          <Form method="post" className="self-start" id="lock">
            <ReauthNotice notice={loaderData.signing.notice} />
            <SigningExplainer
              act="Locking"
              meaning={loaderData.signing.meaning}
              fresh={loaderData.signing.fresh}
            />
            <button
              type="submit"
              name="intent"
              value="lock"
              className="btn"
              disabled={v.unresolvedHits > 0 || navigation.state !== "idle"}
              aria-describedby="lock-hint"
            >
              Lock version {v.version}
            </button>
            <p id="lock-hint" className="mt-1 max-w-[16rem] text-xs text-ink-soft">
              {v.unresolvedHits > 0
                ? "Resolve every identifier screen hit first."
                : "Freezes these exact bytes; a changed file becomes a new version."}
            </p>
          </Form>
        ) : null}
      </div>
      {actionData?.message ? (
        <p role="alert" className="mb-4 text-sm font-medium text-finding">
          {actionData.message}
        </p>
      ) : null}
      {v.status === "superseded" ? (
        <p className="mb-4 text-sm" role="status">
          This version was superseded by version {detail.latestVersion}; it can no longer be screened or
          locked.
          {v.purgedAt
            ? ` Its stored file and parsed columns were purged by ${v.purgedBy ?? "–"}, ${formatTime(v.purgedAt)}; the record of the version stays.`
            : ""}
        </p>
      ) : null}
      {canPurge ? <PurgeVersion version={v.version} error={actionData?.errors?.purge} /> : null}
      <div className="space-y-6">
        {v.derivedFromVersion ? (
          <p className="text-sm">
            Derived from version {v.derivedFromVersion} by removing{" "}
            {v.removedColumns.map((c) => `“${c}”`).join(", ")} (identifier screen).
          </p>
        ) : null}
        <ReadWarnings columns={detail.columns} />
        {v.changes ? <ChangeSummaryPanel changes={v.changes} version={v.version} /> : null}
        <ScreenHits
          hits={detail.hits}
          canDecide={canScreen && v.status === "draft"}
          errors={actionData?.errors ?? {}}
          keyColumns={detail.keyColumns}
        />
        <div className="grid gap-4 xl:grid-cols-[1fr_18rem]">
          <section aria-labelledby="preview" className="min-w-0">
            <h2 id="preview" className="mb-2">
              Preview{" "}
              <span className="num text-sm font-normal text-ink-soft">
                ({formatCount(v.rowCount)} rows; select a column heading to sort)
              </span>
            </h2>
            {v.purgedAt ? (
              <p className="text-sm text-ink-soft">The rows of this version were purged.</p>
            ) : canRows ? (
              <PreviewTable
                rowsUrl={`${base}/${v.id}/rows`}
                columns={detail.columns}
                total={v.rowCount}
                masked={detail.maskedColumns}
              />
            ) : (
              <p className="text-sm text-ink-soft">Your role does not show subject-level rows.</p>
            )}
          </section>
          <ColumnSummaries columns={detail.columns} keyColumns={detail.keyColumns} />
        </div>
      </div>
    </>
  );
}
