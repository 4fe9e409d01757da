/**
 * Analysis plans and their versions. A version is edited as a draft, submitted, and approved
 * by a biostatistician who neither wrote nor edited it (two-person rule); approval freezes it.
 * Any change after that is a new version, compared field by field with the one before.
 * Saves carry the revision they were made on; a save on an older revision is refused.
 */
import { requireFreshSignIn, signatureEvidence, type Signer } from "../signatures.server";
import { and, asc, desc, eq, inArray } from "drizzle-orm";
import { data } from "react-router";
import { z } from "zod";
import { appendAudit, canonicalJson } from "../audit.server";
import type { PersonActor } from "../people.server";
import { db, isoNow, newId, t, writeTransaction, type DbOrTx } from "../db/index.server";
import { notifyPlanAwaitsApproval } from "../mail/notifications.server";
import {
  legacyPopulationSchema,
  plannedModelSchema,
  withLegacyPopulation,
  type PlannedModel,
} from "./planned-model";

export type PlanVersion = typeof t.planVersions.$inferSelect;
export type PlanStatus = PlanVersion["status"];

export const STATUS_LABELS: Record<PlanStatus, string> = {
  draft: "Draft",
  awaiting_approval: "Awaiting approval",
  approved: "Approved",
  superseded: "Superseded",
};

export interface StoredPlannedModel extends PlannedModel {
  id: string;
  position: number;
}

/** A YYYY-MM-DD text that names a real day (2026-02-31 does not): the date read back gives the same text. */
export function isCalendarDate(value: string): boolean {
  const at = new Date(`${value}T00:00:00Z`);
  return !Number.isNaN(at.getTime()) && at.toISOString().slice(0, 10) === value;
}

export const PlanHeader = z.object({
  title: z
    .string()
    .trim()
    .min(3, "Give the plan a title, e.g. Statistical analysis plan, efficacy models.")
    .max(200),
  sapName: z.string().trim().min(2, "Name the SAP document this plan implements.").max(200),
  sapVersion: z.string().trim().min(1, "Give the SAP document's version, e.g. 2.0.").max(40),
  sapDate: z
    .string()
    .trim()
    .regex(/^\d{4}-\d{2}-\d{2}$/, "Give the SAP's date as YYYY-MM-DD.")
    .refine(
      isCalendarDate,
      "That date does not exist in the calendar (check the day of the month); give the SAP's date as YYYY-MM-DD.",
    ),
});
export type PlanHeader = z.infer<typeof PlanHeader>;

export class PlanConflict extends Error {}

function toStored(row: typeof t.plannedModels.$inferSelect): StoredPlannedModel {
  return {
    id: row.id,
    position: row.position,
    ...plannedModelSchema.parse({
      key: row.key,
      title: row.title,
      datasetName: row.datasetName,
      // plans stored before population conditions kept one column = value beside the specification
      spec: withLegacyPopulation(
        JSON.parse(row.specJson),
        legacyPopulationSchema.parse(row.populationJson ? JSON.parse(row.populationJson) : null),
      ),
      checks: JSON.parse(row.checksJson),
      sensitivity: JSON.parse(row.sensitivityJson),
    }),
  };
}

export async function listPlans(studyId: string) {
  const plans = await db
    .select()
    .from(t.analysisPlans)
    .where(eq(t.analysisPlans.studyId, studyId))
    .orderBy(asc(t.analysisPlans.createdAt));
  if (plans.length === 0) return [];
  const versions = await db
    .select({ v: t.planVersions, author: t.people.displayName })
    .from(t.planVersions)
    .leftJoin(t.people, eq(t.people.id, t.planVersions.authorId))
    .where(
      inArray(
        t.planVersions.planId,
        plans.map((p) => p.id),
      ),
    )
    .orderBy(desc(t.planVersions.version));
  return plans.map((p) => ({
    ...p,
    versions: versions.filter((v) => v.v.planId === p.id).map((v) => ({ ...v.v, authorName: v.author })),
  }));
}

/** The version with its plan, its models and the names of its author and approver; 404 if not in this study. */
export async function getPlanVersion(studyId: string, versionId: string, q: DbOrTx = db) {
  const [row] = await q
    .select({ v: t.planVersions, plan: t.analysisPlans })
    .from(t.planVersions)
    .innerJoin(t.analysisPlans, eq(t.analysisPlans.id, t.planVersions.planId))
    .where(and(eq(t.planVersions.id, versionId), eq(t.analysisPlans.studyId, studyId)))
    .limit(1);
  if (!row) throw data({ message: "There is no such plan version in this study." }, { status: 404 });
  const models = await q
    .select()
    .from(t.plannedModels)
    .where(eq(t.plannedModels.planVersionId, versionId))
    .orderBy(asc(t.plannedModels.position));
  const names = await q.select({ id: t.people.id, name: t.people.displayName }).from(t.people);
  const nameOf = (id: string | null) => (id ? (names.find((n) => n.id === id)?.name ?? "unknown") : null);
  const editors = (JSON.parse(row.v.editorIdsJson) as string[]).map((id) => nameOf(id) ?? id);
  return {
    version: row.v,
    plan: row.plan,
    models: models.map(toStored),
    authorName: nameOf(row.v.authorId),
    approverName: nameOf(row.v.approvedBy),
    editors,
  };
}

export async function getPlannedModel(
  modelId: string,
): Promise<StoredPlannedModel & { planVersionId: string }> {
  const [row] = await db.select().from(t.plannedModels).where(eq(t.plannedModels.id, modelId)).limit(1);
  if (!row) throw data({ message: "There is no such planned model." }, { status: 404 });
  return { ...toStored(row), planVersionId: row.planVersionId };
}

export async function createPlan(actor: PersonActor, studyId: string, header: PlanHeader) {
  return writeTransaction(async (tx) => {
    const planId = newId();
    const versionId = newId();
    await tx.insert(t.analysisPlans).values({ id: planId, studyId, name: header.title, createdBy: actor.id });
    await tx.insert(t.planVersions).values({
      id: versionId,
      planId,
      version: 1,
      ...header,
      authorId: actor.id,
      editorIdsJson: JSON.stringify([actor.id]),
    });
    await appendAudit(
      {
        actor,
        action: "plan.create",
        entityType: "plan_version",
        entityId: versionId,
        studyId,
        after: header,
      },
      tx,
    );
    return { planId, versionId };
  });
}

/** Loads the draft for a change, refusing frozen versions and stale revisions. */
async function draftForChange(
  tx: DbOrTx,
  studyId: string,
  versionId: string,
  revision: number,
): Promise<PlanVersion> {
  const { version } = await getPlanVersion(studyId, versionId, tx);
  if (version.status !== "draft") {
    throw data(
      {
        message: `Version ${version.version} is ${STATUS_LABELS[version.status].toLowerCase()} and can no longer be changed. Start a new version to change the plan.`,
      },
      { status: 409 },
    );
  }
  if (version.revision !== revision) {
    throw new PlanConflict(
      "Someone else saved this plan version after you opened it, so your save was refused to keep their change. Reload the page to see the current version, then make your change again.",
    );
  }
  return version;
}

async function touch(tx: DbOrTx, v: PlanVersion, actorId: string): Promise<number> {
  const editors = new Set(JSON.parse(v.editorIdsJson) as string[]);
  editors.add(actorId);
  const revision = v.revision + 1;
  await tx
    .update(t.planVersions)
    .set({ revision, updatedAt: isoNow(), editorIdsJson: JSON.stringify([...editors].sort()) })
    .where(and(eq(t.planVersions.id, v.id), eq(t.planVersions.revision, v.revision)));
  return revision;
}

export async function updatePlanHeader(
  actor: PersonActor,
  studyId: string,
  versionId: string,
  revision: number,
  header: PlanHeader,
) {
  return writeTransaction(async (tx) => {
    const v = await draftForChange(tx, studyId, versionId, revision);
    await tx.update(t.planVersions).set(header).where(eq(t.planVersions.id, v.id));
    await appendAudit(
      {
        actor,
        action: "plan.edit",
        entityType: "plan_version",
        entityId: v.id,
        studyId,
        before: { title: v.title, sapName: v.sapName, sapVersion: v.sapVersion, sapDate: v.sapDate },
        after: header,
      },
      tx,
    );
    return touch(tx, v, actor.id);
  });
}

export async function savePlannedModel(
  actor: PersonActor,
  studyId: string,
  versionId: string,
  revision: number,
  modelId: string | null,
  model: PlannedModel,
): Promise<string> {
  return writeTransaction(async (tx) => {
    const v = await draftForChange(tx, studyId, versionId, revision);
    const values = {
      key: model.key,
      title: model.title,
      datasetName: model.datasetName,
      populationJson: null,
      specJson: canonicalJson(model.spec),
      checksJson: canonicalJson(model.checks),
      sensitivityJson: canonicalJson(model.sensitivity),
    };
    let id = modelId;
    let before: unknown;
    if (id) {
      const [old] = await tx
        .select()
        .from(t.plannedModels)
        .where(and(eq(t.plannedModels.id, id), eq(t.plannedModels.planVersionId, v.id)))
        .limit(1);
      if (!old) throw data({ message: "That planned model is not part of this version." }, { status: 404 });
      before = toStored(old);
      await tx.update(t.plannedModels).set(values).where(eq(t.plannedModels.id, id));
    } else {
      id = newId();
      const existing = await tx
        .select({ id: t.plannedModels.id })
        .from(t.plannedModels)
        .where(eq(t.plannedModels.planVersionId, v.id));
      await tx
        .insert(t.plannedModels)
        .values({ id, planVersionId: v.id, position: existing.length, ...values });
    }
    await appendAudit(
      {
        actor,
        action: modelId ? "plan.model_edit" : "plan.model_add",
        entityType: "planned_model",
        entityId: id,
        studyId,
        before,
        after: model,
      },
      tx,
    );
    await touch(tx, v, actor.id);
    return id;
  });
}

export async function removePlannedModel(
  actor: PersonActor,
  studyId: string,
  versionId: string,
  revision: number,
  modelId: string,
) {
  await writeTransaction(async (tx) => {
    const v = await draftForChange(tx, studyId, versionId, revision);
    const [old] = await tx
      .select()
      .from(t.plannedModels)
      .where(and(eq(t.plannedModels.id, modelId), eq(t.plannedModels.planVersionId, v.id)))
      .limit(1);
    if (!old) return;
    await tx.delete(t.plannedModels).where(eq(t.plannedModels.id, modelId));
    await appendAudit(
      {
        actor,
        action: "plan.model_remove",
        entityType: "planned_model",
        entityId: modelId,
        studyId,
        before: toStored(old),
      },
      tx,
    );
    await touch(tx, v, actor.id);
  });
}

export async function submitForApproval(
  actor: PersonActor,
  studyId: string,
  versionId: string,
  revision: number,
) {
  return writeTransaction(async (tx) => {
    const v = await draftForChange(tx, studyId, versionId, revision);
    const models = await tx
      .select({ id: t.plannedModels.id })
      .from(t.plannedModels)
      .where(eq(t.plannedModels.planVersionId, v.id));
    if (models.length === 0)
      throw new PlanConflict("Add at least one planned model before submitting the plan for approval.");
    await tx
      .update(t.planVersions)
      .set({ status: "awaiting_approval", returnNote: null, updatedAt: isoNow() })
      .where(eq(t.planVersions.id, v.id));
    await appendAudit(
      {
        actor,
        action: "plan.submit",
        entityType: "plan_version",
        entityId: v.id,
        studyId,
        before: { status: "draft" },
        after: { status: "awaiting_approval" },
      },
      tx,
    );
    await notifyPlanAwaitsApproval(tx, { studyId, versionId: v.id, submittedBy: actor.id });
    return v;
  });
}

async function awaiting(tx: DbOrTx, studyId: string, versionId: string) {
  const { version } = await getPlanVersion(studyId, versionId, tx);
  if (version.status !== "awaiting_approval")
    throw new PlanConflict(
      `Version ${version.version} is not awaiting approval (it is ${STATUS_LABELS[version.status].toLowerCase()}).`,
    );
  return version;
}

/**
 * Approval by a second biostatistician: neither the author nor anyone who edited the version.
 * Approval is an electronic signature (`signatures.server.ts`): it needs a fresh sign-in (else
 * `SignatureRefused`) and records its meaning, the approver's name and the time.
 */
export async function approvePlanVersion(actor: Signer, studyId: string, versionId: string) {
  return writeTransaction(async (tx) => {
    const v = await awaiting(tx, studyId, versionId);
    const editors = JSON.parse(v.editorIdsJson) as string[];
    if (v.authorId === actor.id || editors.includes(actor.id)) {
      throw new PlanConflict(
        "You wrote or edited this version, so you cannot approve it: a second biostatistician who did neither must approve it (two-person rule).",
      );
    }
    requireFreshSignIn(actor);
    const at = isoNow();
    await tx
      .update(t.planVersions)
      .set({ status: "approved", approvedBy: actor.id, approvedAt: at })
      .where(eq(t.planVersions.id, v.id));
    const older = await tx
      .select({ id: t.planVersions.id })
      .from(t.planVersions)
      .where(and(eq(t.planVersions.planId, v.planId), eq(t.planVersions.status, "approved")));
    for (const o of older) {
      if (o.id === v.id) continue;
      await tx.update(t.planVersions).set({ status: "superseded" }).where(eq(t.planVersions.id, o.id));
      await appendAudit(
        {
          actor,
          action: "plan.supersede",
          entityType: "plan_version",
          entityId: o.id,
          studyId,
          before: { status: "approved" },
          after: { status: "superseded", by: v.id },
        },
        tx,
      );
    }
    await appendAudit(
      {
        actor,
        action: "plan.approve",
        entityType: "plan_version",
        entityId: v.id,
        studyId,
        before: { status: "awaiting_approval" },
        after: { status: "approved", approvedAt: at, signature: signatureEvidence("plan", actor, at) },
      },
      tx,
    );
  });
}

export async function returnPlanVersion(
  actor: PersonActor,
  studyId: string,
  versionId: string,
  note: string,
) {
  return writeTransaction(async (tx) => {
    const v = await awaiting(tx, studyId, versionId);
    await tx
      .update(t.planVersions)
      .set({ status: "draft", returnNote: note, revision: v.revision + 1 })
      .where(eq(t.planVersions.id, v.id));
    await appendAudit(
      {
        actor,
        action: "plan.return",
        entityType: "plan_version",
        entityId: v.id,
        studyId,
        before: { status: "awaiting_approval" },
        after: { status: "draft" },
        detail: note,
      },
      tx,
    );
  });
}

/** Starts the next version as a draft copy of this one. */
export async function startNextVersion(
  actor: PersonActor,
  studyId: string,
  versionId: string,
): Promise<string> {
  return writeTransaction(async (tx) => {
    const { version, models } = await getPlanVersion(studyId, versionId, tx);
    const siblings = await tx
      .select({ version: t.planVersions.version, status: t.planVersions.status })
      .from(t.planVersions)
      .where(eq(t.planVersions.planId, version.planId));
    if (siblings.some((s) => s.status === "draft" || s.status === "awaiting_approval")) {
      throw new PlanConflict(
        "This plan already has a version in progress; finish or approve that one first.",
      );
    }
    const next = Math.max(...siblings.map((s) => s.version)) + 1;
    const id = newId();
    await tx.insert(t.planVersions).values({
      id,
      planId: version.planId,
      version: next,
      title: version.title,
      sapName: version.sapName,
      sapVersion: version.sapVersion,
      sapDate: version.sapDate,
      authorId: actor.id,
      editorIdsJson: JSON.stringify([actor.id]),
    });
    for (const m of models) {
      await tx.insert(t.plannedModels).values({
        id: newId(),
        planVersionId: id,
        position: m.position,
        key: m.key,
        title: m.title,
        datasetName: m.datasetName,
        populationJson: null,
        specJson: canonicalJson(m.spec),
        checksJson: canonicalJson(m.checks),
        sensitivityJson: canonicalJson(m.sensitivity),
      });
    }
    await appendAudit(
      {
        actor,
        action: "plan.new_version",
        entityType: "plan_version",
        entityId: id,
        studyId,
        after: { version: next, from: version.version },
      },
      tx,
    );
    return id;
  });
}

/** The version before this one of the same plan, if any. */
export async function previousVersionId(planId: string, version: number): Promise<string | null> {
  const [row] = await db
    .select({ id: t.planVersions.id })
    .from(t.planVersions)
    .where(and(eq(t.planVersions.planId, planId), eq(t.planVersions.version, version - 1)))
    .limit(1);
  return row?.id ?? null;
}

/** Approved planned models of a study, for starting reruns. */
export async function approvedModels(studyId: string) {
  const rows = await db
    .select({ m: t.plannedModels, v: t.planVersions })
    .from(t.plannedModels)
    .innerJoin(t.planVersions, eq(t.planVersions.id, t.plannedModels.planVersionId))
    .innerJoin(t.analysisPlans, eq(t.analysisPlans.id, t.planVersions.planId))
    .where(and(eq(t.analysisPlans.studyId, studyId), eq(t.planVersions.status, "approved")))
    .orderBy(asc(t.plannedModels.position));
  return rows.map((r) => ({
    ...toStored(r.m),
    planVersionId: r.v.id,
    planVersion: r.v.version,
    planTitle: r.v.title,
  }));
}
