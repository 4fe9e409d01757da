/** Studies: created by administrators, opened by the people who hold a role on them. */
import { and, asc, count, eq, sql } from "drizzle-orm";
import { data } from "react-router";
import { z } from "zod";
import { appendAudit, type Actor } from "./audit.server";
import { db, newId, t, writeTransaction } from "./db/index.server";
import type { StudyRole } from "./db/schema";

export type Study = typeof t.studies.$inferSelect;

export interface StudyListing extends Study {
  role: StudyRole | null;
  members: number;
}

/** The studies a person holds a role on; administrators see every study. */
export async function listStudiesFor(person: { id: string; isAdmin: boolean }): Promise<StudyListing[]> {
  const memberCounts = db
    .select({ studyId: t.studyMemberships.studyId, members: count().as("members") })
    .from(t.studyMemberships)
    .groupBy(t.studyMemberships.studyId)
    .as("member_counts");
  const rows = await db
    .select({ study: t.studies, role: t.studyMemberships.role, members: memberCounts.members })
    .from(t.studies)
    .leftJoin(
      t.studyMemberships,
      and(eq(t.studyMemberships.studyId, t.studies.id), eq(t.studyMemberships.personId, person.id)),
    )
    .leftJoin(memberCounts, eq(memberCounts.studyId, t.studies.id))
    .orderBy(asc(t.studies.code));
  return rows
    .filter((r) => person.isAdmin || r.role !== null)
    .map((r) => ({ ...r.study, role: r.role, members: r.members ?? 0 }));
}

/** The study, or a 404 that says so. */
/** Every study page reads its study: the query is built once (prepared), not per request. */
const studyById = db
  .select()
  .from(t.studies)
  .where(eq(t.studies.id, sql.placeholder("id")))
  .limit(1)
  .prepare();

export async function getStudyOr404(studyId: string): Promise<Study> {
  const [study] = await studyById.all({ id: studyId });
  if (!study) throw data({ message: `There is no study with the id "${studyId}".` }, { status: 404 });
  return study;
}

export const NewStudy = z.object({
  code: z
    .string()
    .trim()
    .min(2, "Give the study code, for example ABC-301.")
    .max(40, "Keep the study code under 40 characters.")
    .regex(
      /^[A-Za-z0-9][A-Za-z0-9._-]*$/,
      "Use letters, digits, dots, dashes or underscores in the study code.",
    ),
  title: z.string().trim().min(3, "Give the study title.").max(300, "Keep the title under 300 characters."),
  sponsor: z.string().trim().min(2, "Name the sponsor.").max(200),
  compound: z
    .string()
    .trim()
    .max(200)
    .optional()
    .transform((v) => v || null),
  indication: z
    .string()
    .trim()
    .max(200)
    .optional()
    .transform((v) => v || null),
  phase: z
    .string()
    .trim()
    .max(20)
    .optional()
    .transform((v) => v || null),
});
export type NewStudy = z.infer<typeof NewStudy>;

export type CreateStudyResult =
  { ok: true; study: Study } | { ok: false; fieldErrors: Record<string, string> };

export async function createStudy(actor: Actor, input: NewStudy): Promise<CreateStudyResult> {
  return writeTransaction(async (tx) => {
    const [clash] = await tx
      .select({ id: t.studies.id })
      .from(t.studies)
      .where(eq(t.studies.code, input.code))
      .limit(1);
    if (clash)
      return { ok: false, fieldErrors: { code: `A study with the code ${input.code} already exists.` } };
    const study: Study = { id: newId(), ...input, createdBy: actor.id, createdAt: new Date().toISOString() };
    await tx.insert(t.studies).values(study);
    await appendAudit(
      {
        actor,
        action: "study.create",
        entityType: "study",
        entityId: study.id,
        studyId: study.id,
        after: input,
      },
      tx,
    );
    return { ok: true, study };
  });
}
