/**
 * Reruns: an approved planned model fitted to a locked dataset version by the engine, off the
 * request in a background job. The stored result is canonical JSON in a content-addressed file
 * written by the compute thread (`result-files.ts`); its SHA-256 is recorded in the row,
 * and because the input (dataset bytes, plan version, engine version, options) fully
 * determines it, rerunning yields the same hash. A model that cannot be estimated as planned
 * is kept as a failed rerun with the engine's reason and a finding of that kind.
 */
import path from "node:path";
import { and, asc, eq } from "drizzle-orm";
import { data } from "react-router";
import { findingSummary } from "~/engine/checks";
import { EngineError, ENGINE_VERSION } from "~/engine";
import { appendAudit, canonicalJson, SYSTEM_ACTOR } from "../audit.server";
import { runRerunTask } from "../compute/pool.server";
import { config } from "../config.server";
import { sha256Hex } from "../compute/rerun-task";
import { traceStep } from "../diagnostics/event-loop-trace.server";
import { lockedColumnsFile } from "../datasets/catalog.server";
import { db, isoNow, newId, t, writeTransaction } from "../db/index.server";
import { enqueueJob, registerJobFailureHook, registerJobHandler, type Job } from "../jobs/jobs.server";
import { notifyRerunAwaitsSignOff } from "../mail/notifications.server";
import type { PersonActor } from "../people.server";
import { getPlannedModel } from "../plans/plans.server";
import { reproductionCheckOf } from "./compute-rerun";
import { describeOptions, rerunOptionsSchema, type RerunOptions } from "./rerun-options";
import { exclusionProblem } from "./what-if.server";
import { plannedSensitivityOptions } from "./planned-sensitivity";
import { rerunColumns, studyRerunListRows, storedRerunDocument, type RerunRecord } from "./rerun-rows.server";

export { computeRerun, reproductionCheckOf, type RerunDocument, type RerunTable } from "./compute-rerun";
export { getRerun, storedRerunDocument } from "./rerun-rows.server";

export const RERUN_JOB = "rerun";

/** A rerun row (its result is read with `storedRerunDocument`). */
export type Rerun = RerunRecord;

export function hashDocument(json: string): string {
  return sha256Hex(json);
}

/** Job handler: runs the rerun and stores its result, its findings, or why it failed. */
export async function executeRerun(rerunId: string): Promise<void> {
  const since = performance.now();
  const [rerun] = await db.select(rerunColumns).from(t.reruns).where(eq(t.reruns.id, rerunId)).limit(1);
  if (!rerun || rerun.status === "completed") return;
  await writeTransaction((tx) =>
    tx.update(t.reruns).set({ status: "running", startedAt: isoNow() }).where(eq(t.reruns.id, rerunId)),
  );
  const model = await getPlannedModel(rerun.plannedModelId);
  const parsedOptions = rerunOptionsSchema.safeParse(JSON.parse(rerun.optionsJson));
  if (!parsedOptions.success) {
    const issue = parsedOptions.error.issues[0];
    throw new Error(`its options are not valid (${issue.path.join(".") || "options"}: ${issue.message})`);
  }
  const options = parsedOptions.data;
  // the computation runs in a compute thread (pool.server.ts): this process keeps serving
  let outcome: Awaited<ReturnType<typeof runRerunTask>>;
  try {
    const locked = await lockedColumnsFile(rerun.datasetVersionId);
    if (locked.sha256 !== rerun.datasetSha256)
      throw new EngineError(
        "the locked dataset's hash differs from the one recorded when the rerun was started",
      );
    outcome = await runRerunTask({
      model,
      columnsFile: locked.file,
      options,
      meta: { datasetSha256: locked.sha256, planVersionId: rerun.planVersionId },
      dataDir: path.resolve(config.DATA_DIR),
    });
  } catch (e) {
    if (!(e instanceof EngineError)) throw e;
    outcome = { ok: false, engineError: e.message };
  }
  traceStep(`rerun ${rerunId}`, "computed", since);
  if (!outcome.ok) {
    const reason = outcome.engineError;
    await writeTransaction(async (tx) => {
      await tx
        .update(t.reruns)
        .set({ status: "failed", failureReason: reason, engineVersion: ENGINE_VERSION, finishedAt: isoNow() })
        .where(eq(t.reruns.id, rerunId));
      await tx.insert(t.findings).values({
        id: newId(),
        rerunId,
        checkKey: "estimable",
        kind: "not_estimable",
        summary: `Not estimable as planned: ${reason}.`,
      });
      await appendAudit(
        {
          actor: SYSTEM_ACTOR,
          action: "rerun.fail",
          entityType: "rerun",
          entityId: rerunId,
          studyId: rerun.studyId,
          detail: reason,
        },
        tx,
      );
    });
    traceStep(`rerun ${rerunId}`, "failure stored", since);
    return;
  }
  // the compute thread wrote the result file (result-files.ts); the row records its hash
  const { sha256: hash, subjectIds } = outcome;
  const doc = {
    engineVersion: outcome.engineVersion,
    checks: outcome.checks,
    reproduction: outcome.reproduction,
  };
  await writeTransaction(async (tx) => {
    await tx
      .update(t.reruns)
      .set({
        status: "completed",
        resultSha256: hash,
        engineVersion: doc.engineVersion,
        finishedAt: isoNow(),
      })
      .where(eq(t.reruns.id, rerunId));
    traceStep(`rerun ${rerunId}`, "result row written", since);
    // the reproduction check, when the plan gives published values, counts as one of the checks
    const reproduction = reproductionCheckOf(doc);
    const notReproduced = reproduction?.outcome === "finding";
    const findingCount = doc.checks.filter((c) => c.outcome === "finding").length + (notReproduced ? 1 : 0);
    if (rerun.kind === "primary") {
      const found = doc.checks.filter((c) => c.outcome === "finding");
      // Nothing to assess: the rerun awaits sign-off as soon as it completes.
      if (found.length === 0 && !notReproduced)
        await notifyRerunAwaitsSignOff(tx, { studyId: rerun.studyId, rerunId, subjectIds });
      for (const c of found) {
        await tx.insert(t.findings).values({
          id: newId(),
          rerunId,
          checkKey: c.key,
          kind: "check",
          statistic: c.statistic,
          threshold: c.threshold,
          summary: findingSummary(c.label, c.summary),
          detailJson: canonicalJson({ flaggedCount: c.flagged?.length ?? 0 }),
        });
      }
      if (reproduction && notReproduced) {
        await tx.insert(t.findings).values({
          id: newId(),
          rerunId,
          checkKey: reproduction.key,
          kind: "check",
          statistic: reproduction.statistic,
          threshold: reproduction.threshold,
          summary: findingSummary(reproduction.label, reproduction.summary),
          detailJson: canonicalJson({ flaggedCount: 0 }),
        });
      }
    }
    await appendAudit(
      {
        actor: SYSTEM_ACTOR,
        action: "rerun.complete",
        entityType: "rerun",
        entityId: rerunId,
        studyId: rerun.studyId,
        after: {
          resultSha256: hash,
          findings: findingCount,
        },
      },
      tx,
    );
    // the plan's sensitivity analyses run with the primary: queued as jobs of their own once it completed
    if (rerun.kind === "primary") {
      for (const options of plannedSensitivityOptions(model, doc)) {
        await insertRerun(tx, SYSTEM_ACTOR, {
          studyId: rerun.studyId,
          plannedModelId: rerun.plannedModelId,
          planVersionId: rerun.planVersionId,
          datasetVersionId: rerun.datasetVersionId,
          datasetSha256: rerun.datasetSha256,
          startedBy: rerun.startedBy,
          options,
          parentRerunId: rerunId,
          prespecified: true,
          audit: { plannedModel: model.key, queuedWith: rerunId },
        });
      }
    }
  });
  traceStep(`rerun ${rerunId}`, "result stored", since);
}

type Tx = Parameters<Parameters<typeof writeTransaction>[0]>[0];

/** Records a rerun, queues its job and audits its start, inside the caller's transaction. */
async function insertRerun(
  tx: Tx,
  actor: PersonActor | typeof SYSTEM_ACTOR,
  r: {
    studyId: string;
    plannedModelId: string;
    planVersionId: string;
    datasetVersionId: string;
    datasetSha256: string;
    startedBy: string | null;
    options: RerunOptions;
    parentRerunId: string | null;
    prespecified: boolean;
    audit: Record<string, unknown>;
  },
): Promise<string> {
  const id = newId();
  const kind = r.options.variant === "planned" ? "primary" : "sensitivity";
  await tx.insert(t.reruns).values({
    id,
    studyId: r.studyId,
    plannedModelId: r.plannedModelId,
    planVersionId: r.planVersionId,
    datasetVersionId: r.datasetVersionId,
    kind,
    sensitivityKey: kind === "sensitivity" ? r.options.variant : null,
    parentRerunId: r.parentRerunId,
    prespecified: r.prespecified,
    optionsJson: canonicalJson(r.options),
    label: describeOptions(r.options),
    datasetSha256: r.datasetSha256,
    startedBy: r.startedBy,
  });
  await enqueueJob(tx, RERUN_JOB, { rerunId: id });
  await appendAudit(
    {
      actor,
      action: "rerun.start",
      entityType: "rerun",
      entityId: id,
      studyId: r.studyId,
      after: { ...r.audit, datasetSha256: r.datasetSha256, options: r.options, prespecified: r.prespecified },
    },
    tx,
  );
  return id;
}

/**
 * A rerun job that failed for any reason (its server stopped too often, an unexpected error,
 * invalid input): the rerun is marked failed with the reason, shown on its results page. A
 * rerun that already ended keeps its outcome.
 */
export async function failRerunOfJob(job: Job, reason: string): Promise<void> {
  const rerunId = (JSON.parse(job.payloadJson) as { rerunId?: unknown } | null)?.rerunId;
  if (typeof rerunId !== "string") return;
  const failureReason = `The rerun could not be completed: ${reason}`;
  await writeTransaction(async (tx) => {
    const [r] = await tx
      .select({ status: t.reruns.status, studyId: t.reruns.studyId })
      .from(t.reruns)
      .where(eq(t.reruns.id, rerunId))
      .limit(1);
    if (!r || r.status === "completed" || r.status === "failed") return;
    await tx
      .update(t.reruns)
      .set({ status: "failed", failureReason, finishedAt: isoNow() })
      .where(eq(t.reruns.id, rerunId));
    await appendAudit(
      {
        actor: SYSTEM_ACTOR,
        action: "rerun.fail",
        entityType: "rerun",
        entityId: rerunId,
        studyId: r.studyId,
        detail: failureReason,
      },
      tx,
    );
  });
}

/** Registers the rerun job's handler and failure hook (called where the job worker starts). */
export function registerRerunJobs(): void {
  registerJobHandler(RERUN_JOB, async (payload) => {
    const rerunId = (payload as { rerunId?: unknown } | null)?.rerunId;
    if (typeof rerunId !== "string") throw new Error("the job names no rerun");
    await executeRerun(rerunId);
  });
  registerJobFailureHook(RERUN_JOB, failRerunOfJob);
}

export interface StartRerun {
  plannedModelId: string;
  datasetVersionId: string;
  options: RerunOptions;
  parentRerunId?: string | null;
  prespecified?: boolean;
}

/**
 * Refuses options a job could not run (the same schema the job reads them with), and an
 * exclusion of rows the rerun it varies did not analyse; nothing is queued then.
 */
async function refuseInvalidOptions(studyId: string, input: StartRerun): Promise<RerunOptions> {
  const parsed = rerunOptionsSchema.safeParse(input.options);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw data(
      {
        message: `The rerun's options are not valid (${issue.path.join(".") || "options"}: ${issue.message}). Nothing was started.`,
      },
      { status: 400 },
    );
  }
  const options = parsed.data;
  if (options.variant === "exclude_rows") {
    const [parent] = input.parentRerunId
      ? await db
          .select({ id: t.reruns.id, resultSha256: t.reruns.resultSha256 })
          .from(t.reruns)
          .where(and(eq(t.reruns.id, input.parentRerunId), eq(t.reruns.studyId, studyId)))
          .limit(1)
      : [];
    const doc = parent ? await storedRerunDocument(parent) : null;
    if (!doc)
      throw data(
        {
          message:
            "Subjects are excluded from a completed primary rerun; start the exclusion from its results page.",
        },
        { status: 400 },
      );
    const problem = exclusionProblem(doc, options.rows, options.subjects);
    if (problem) throw data({ message: `${problem} Nothing was started.` }, { status: 400 });
  }
  return options;
}

export async function startRerun(actor: PersonActor, studyId: string, input: StartRerun): Promise<string> {
  await refuseInvalidOptions(studyId, input);
  const model = await getPlannedModel(input.plannedModelId);
  const [pv] = await db
    .select({ v: t.planVersions, studyId: t.analysisPlans.studyId })
    .from(t.planVersions)
    .innerJoin(t.analysisPlans, eq(t.analysisPlans.id, t.planVersions.planId))
    .where(eq(t.planVersions.id, model.planVersionId))
    .limit(1);
  if (!pv || pv.studyId !== studyId)
    throw data({ message: "That planned model is not part of this study." }, { status: 404 });
  if (pv.v.status !== "approved")
    throw data({ message: "Only planned models of an approved plan version can be rerun." }, { status: 409 });
  const [dv] = await db
    .select({ v: t.datasetVersions, d: t.datasets })
    .from(t.datasetVersions)
    .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
    .where(eq(t.datasetVersions.id, input.datasetVersionId))
    .limit(1);
  if (!dv || dv.d.studyId !== studyId || dv.v.status !== "locked")
    throw data({ message: "Choose a locked version of this study's dataset." }, { status: 409 });
  if (dv.d.name !== model.datasetName)
    throw data(
      { message: `The planned model reads ${model.datasetName}, not ${dv.d.name}.` },
      { status: 409 },
    );
  return writeTransaction((tx) =>
    insertRerun(tx, actor, {
      studyId,
      plannedModelId: model.id,
      planVersionId: model.planVersionId,
      datasetVersionId: dv.v.id,
      datasetSha256: dv.v.sha256,
      startedBy: actor.id,
      options: input.options,
      parentRerunId: input.parentRerunId ?? null,
      prespecified: input.prespecified ?? true,
      audit: { plannedModel: model.key, dataset: `${dv.d.name} v${dv.v.version}` },
    }),
  );
}

export interface RerunListing {
  id: string;
  kind: "primary" | "sensitivity";
  label: string | null;
  status: Rerun["status"];
  modelKey: string;
  modelTitle: string;
  datasetName: string;
  datasetVersion: number;
  planVersion: number;
  createdAt: string;
  startedBy: string | null;
  findings: number;
  signedAt: string | null;
  parentRerunId: string | null;
  prespecified: boolean;
  resultSha256: string | null;
}

/** The study's reruns for listing (never their stored results: one of a large rerun is hundreds of MB). */
export async function listReruns(studyId: string): Promise<RerunListing[]> {
  const rows = await studyRerunListRows(studyId);
  return rows.map(({ r, m, dv, d, pv, who, findings }) => ({
    id: r.id,
    kind: r.kind,
    label: r.label,
    status: r.status,
    modelKey: m.key,
    modelTitle: m.title,
    datasetName: d.name,
    datasetVersion: dv.version,
    planVersion: pv.version,
    createdAt: r.createdAt,
    startedBy: who,
    findings,
    signedAt: r.signedAt,
    parentRerunId: r.parentRerunId,
    prespecified: r.prespecified,
    resultSha256: r.resultSha256,
  }));
}

/** The sensitivity reruns started from a primary rerun, oldest first. */
export async function sensitivityReruns(primaryId: string): Promise<RerunRecord[]> {
  return db
    .select(rerunColumns)
    .from(t.reruns)
    .where(eq(t.reruns.parentRerunId, primaryId))
    .orderBy(asc(t.reruns.createdAt));
}

/** Other completed reruns with the same inputs: "rerun again" proves the same hash. */
export async function sameInputReruns(
  r: Pick<Rerun, "id" | "plannedModelId" | "datasetVersionId" | "optionsJson">,
): Promise<{ id: string; resultSha256: string | null; createdAt: string }[]> {
  const rows = await db
    .select({
      id: t.reruns.id,
      resultSha256: t.reruns.resultSha256,
      createdAt: t.reruns.createdAt,
      optionsJson: t.reruns.optionsJson,
      status: t.reruns.status,
    })
    .from(t.reruns)
    .where(
      and(eq(t.reruns.plannedModelId, r.plannedModelId), eq(t.reruns.datasetVersionId, r.datasetVersionId)),
    );
  return rows.filter((x) => x.id !== r.id && x.optionsJson === r.optionsJson && x.status === "completed");
}
