/**
 * Findings, their assessments (each recorded as a deviation), deviations without a finding,
 * and the sign-off. A rerun is signed by a biostatistician who neither started it nor
 * assessed its findings, after every finding is assessed, under the signing rule of
 * `signatures.server.ts` (fresh sign-in, meaning, name and time); the signature publishes it to sponsor readers.
 */
import { and, asc, desc, eq, inArray, isNull } from "drizzle-orm";
import { data } from "react-router";
import { z } from "zod";
import { appendAudit } from "../audit.server";
import { db, isoNow, newId, t, writeTransaction, type DbOrTx } from "../db/index.server";
import { notifyReportPublished, notifyRerunAwaitsSignOff } from "../mail/notifications.server";
import type { PersonActor } from "../people.server";
import { freshness, SIGNATURE_MEANINGS, type Signer } from "../signatures.server";
import { ACTIONS, CATEGORIES, IMPACTS } from "~/shared/assessment-terms";
import { withoutRepeatedLabel } from "~/engine/checks";

export { ACTIONS, CATEGORIES, IMPACTS };

export const Assessment = z.object({
  category: z.enum(Object.keys(CATEGORIES) as [keyof typeof CATEGORIES, ...(keyof typeof CATEGORIES)[]], {
    message: "Choose a category.",
  }),
  impact: z.enum(Object.keys(IMPACTS) as [keyof typeof IMPACTS, ...(keyof typeof IMPACTS)[]], {
    message: "Choose the impact on the treatment conclusion.",
  }),
  action: z.enum(Object.keys(ACTIONS) as [keyof typeof ACTIONS, ...(keyof typeof ACTIONS)[]], {
    message: "Choose the action taken.",
  }),
  rationale: z.string().trim().min(10, "Give the rationale in a sentence or two.").max(4000),
});
export type Assessment = z.infer<typeof Assessment>;

const SIGNATURE_MEANING = SIGNATURE_MEANINGS.rerun;

export type Finding = typeof t.findings.$inferSelect;
export type Deviation = typeof t.deviations.$inferSelect;

export async function findingsOf(rerunId: string) {
  const rows = await db
    .select({ f: t.findings, d: t.deviations, who: t.people.displayName })
    .from(t.findings)
    .leftJoin(t.deviations, eq(t.deviations.findingId, t.findings.id))
    .leftJoin(t.people, eq(t.people.id, t.deviations.recordedBy))
    .where(eq(t.findings.rerunId, rerunId))
    .orderBy(asc(t.findings.createdAt));
  return rows.map((r) => ({
    ...r.f,
    summary: withoutRepeatedLabel(r.f.summary),
    assessment: r.d ? { ...r.d, recordedByName: r.who } : null,
  }));
}

async function openRerun(studyId: string, rerunId: string) {
  const [r] = await db
    .select()
    .from(t.reruns)
    .where(and(eq(t.reruns.id, rerunId), eq(t.reruns.studyId, studyId)))
    .limit(1);
  if (!r) throw data({ message: "There is no such rerun in this study." }, { status: 404 });
  if (r.signedAt) throw new FindingConflict("This rerun is signed and can no longer change.");
  return r;
}

export class FindingConflict extends Error {}

export async function assessFinding(
  actor: PersonActor,
  studyId: string,
  findingId: string,
  a: Assessment,
): Promise<void> {
  const [f] = await db.select().from(t.findings).where(eq(t.findings.id, findingId)).limit(1);
  if (!f) throw data({ message: "There is no such finding." }, { status: 404 });
  await openRerun(studyId, f.rerunId);
  await writeTransaction(async (tx) => {
    const [old] = await tx.select().from(t.deviations).where(eq(t.deviations.findingId, findingId)).limit(1);
    if (old) await tx.delete(t.deviations).where(eq(t.deviations.id, old.id));
    const id = newId();
    await tx.insert(t.deviations).values({
      id,
      studyId,
      rerunId: f.rerunId,
      findingId,
      ...a,
      recordedBy: actor.id,
      recordedAt: isoNow(),
    });
    await appendAudit(
      {
        actor,
        action: "finding.assess",
        entityType: "finding",
        entityId: findingId,
        studyId,
        before: old
          ? { category: old.category, impact: old.impact, action: old.action, rationale: old.rationale }
          : undefined,
        after: a,
      },
      tx,
    );
    if (!old && (await awaitsSignOff(tx, f.rerunId)))
      await notifyRerunAwaitsSignOff(tx, { studyId, rerunId: f.rerunId });
  });
}

/** A completed primary rerun whose every finding is assessed. */
async function awaitsSignOff(tx: DbOrTx, rerunId: string): Promise<boolean> {
  const [r] = await tx
    .select({ kind: t.reruns.kind, status: t.reruns.status })
    .from(t.reruns)
    .where(eq(t.reruns.id, rerunId))
    .limit(1);
  if (!r || r.kind !== "primary" || r.status !== "completed") return false;
  const open = await tx
    .select({ id: t.findings.id })
    .from(t.findings)
    .leftJoin(t.deviations, eq(t.deviations.findingId, t.findings.id))
    .where(and(eq(t.findings.rerunId, rerunId), isNull(t.deviations.id)))
    .limit(1);
  return open.length === 0;
}

/** A deviation from the plan that no check produced, e.g. a covariate dropped because a level is empty. */
export async function recordDeviation(
  actor: PersonActor,
  studyId: string,
  rerunId: string | null,
  a: Assessment,
): Promise<void> {
  if (rerunId) await openRerun(studyId, rerunId);
  await writeTransaction(async (tx) => {
    const id = newId();
    await tx
      .insert(t.deviations)
      .values({ id, studyId, rerunId, findingId: null, ...a, recordedBy: actor.id, recordedAt: isoNow() });
    await appendAudit(
      {
        actor,
        action: "deviation.record",
        entityType: "deviation",
        entityId: id,
        studyId,
        after: { rerunId, ...a },
      },
      tx,
    );
  });
}

export interface DeviationFilter {
  category?: string;
  impact?: string;
  model?: string;
}

/** The study's deviation log, newest first, each with its rerun, planned model and check. */
export async function deviationLog(studyId: string, filter: DeviationFilter = {}) {
  const rows = await db
    .select({ d: t.deviations, f: t.findings, r: t.reruns, m: t.plannedModels, who: t.people.displayName })
    .from(t.deviations)
    .leftJoin(t.findings, eq(t.findings.id, t.deviations.findingId))
    .leftJoin(t.reruns, eq(t.reruns.id, t.deviations.rerunId))
    .leftJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
    .leftJoin(t.people, eq(t.people.id, t.deviations.recordedBy))
    .where(eq(t.deviations.studyId, studyId))
    .orderBy(desc(t.deviations.recordedAt));
  return rows
    .filter(
      (r) =>
        (!filter.category || r.d.category === filter.category) &&
        (!filter.impact || r.d.impact === filter.impact) &&
        (!filter.model || r.m?.key === filter.model),
    )
    .map((r) => ({
      ...r.d,
      recordedByName: r.who,
      finding: r.f
        ? {
            id: r.f.id,
            checkKey: r.f.checkKey,
            summary: withoutRepeatedLabel(r.f.summary),
            statistic: r.f.statistic,
            threshold: r.f.threshold,
          }
        : null,
      rerun: r.r ? { id: r.r.id, label: r.r.label, signedAt: r.r.signedAt } : null,
      model: r.m ? { key: r.m.key, title: r.m.title } : null,
    }));
}

export async function signaturesOf(rerunId: string) {
  return db
    .select()
    .from(t.signatures)
    .where(eq(t.signatures.rerunId, rerunId))
    .orderBy(asc(t.signatures.signedAt));
}

export type SignBlock = { ok: true } | { ok: false; reason: string; reauthenticate?: boolean };

/** Whether this person may sign this rerun now, and if not, why (in words for the page). */
export async function canSign(
  person: { id: string; signedInAt: string },
  rerunId: string,
): Promise<SignBlock> {
  // not the stored result: the results page asks this on every load, and a large one is many MB
  const [r] = await db
    .select({
      signedAt: t.reruns.signedAt,
      status: t.reruns.status,
      kind: t.reruns.kind,
      startedBy: t.reruns.startedBy,
    })
    .from(t.reruns)
    .where(eq(t.reruns.id, rerunId))
    .limit(1);
  if (!r) return { ok: false, reason: "There is no such rerun." };
  if (r.signedAt) return { ok: false, reason: "This rerun is already signed." };
  if (r.status !== "completed") return { ok: false, reason: "Only a completed rerun can be signed." };
  if (r.kind !== "primary")
    return { ok: false, reason: "Sign the primary rerun; its sensitivity analyses are published with it." };
  const fs = await findingsOf(rerunId);
  const open = fs.filter((f) => !f.assessment);
  if (open.length > 0)
    return {
      ok: false,
      reason: `${open.length} finding${open.length === 1 ? " is" : "s are"} not assessed yet; every finding needs an assessment before sign-off.`,
    };
  const assessors = new Set(fs.map((f) => f.assessment?.recordedBy).filter(Boolean));
  if (r.startedBy === person.id || assessors.has(person.id)) {
    return {
      ok: false,
      reason:
        "You started this rerun or assessed its findings, so a second biostatistician must sign it (two-person rule).",
    };
  }
  return freshness(person);
}

export async function signRerun(actor: Signer, studyId: string, rerunId: string): Promise<void> {
  await openRerun(studyId, rerunId);
  const verdict = await canSign({ id: actor.id, signedInAt: actor.signedInAt }, rerunId);
  if (!verdict.ok) throw new FindingConflict(verdict.reason);
  await writeTransaction(async (tx) => {
    const at = isoNow();
    await tx.insert(t.signatures).values({
      id: newId(),
      rerunId,
      signerId: actor.id,
      signerName: actor.name,
      meaning: SIGNATURE_MEANING,
      signedAt: at,
      authenticatedAt: actor.signedInAt,
    });
    await tx.update(t.reruns).set({ signedAt: at, publishedAt: at }).where(eq(t.reruns.id, rerunId));
    const children = await tx
      .select({ id: t.reruns.id })
      .from(t.reruns)
      .where(eq(t.reruns.parentRerunId, rerunId));
    if (children.length)
      await tx
        .update(t.reruns)
        .set({ publishedAt: at })
        .where(
          inArray(
            t.reruns.id,
            children.map((c) => c.id),
          ),
        );
    await appendAudit(
      {
        actor,
        action: "rerun.sign",
        entityType: "rerun",
        entityId: rerunId,
        studyId,
        after: { meaning: SIGNATURE_MEANING, signedAt: at, authenticatedAt: actor.signedInAt },
        detail: "published to the study's sponsor readers",
      },
      tx,
    );
    await notifyReportPublished(tx, { studyId, rerunId });
  });
}
