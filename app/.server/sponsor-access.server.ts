/**
 * Which studies a sponsor reader sees. A study is shared with sponsor organisations
 * (`study_shares`); at every sign-in through OpenID Connect the person gets the sponsor reader
 * role on each study shared with their organisation and loses any role on a study that is no
 * longer shared with it (a sponsor account holds no other role). Each change is audited.
 * Between sign-ins, `studyRoleOf` refuses a role on a study whose share was removed.
 */
import { and, eq } from "drizzle-orm";
import { appendAudit } from "./audit.server";
import { newId, t, writeTransaction } from "./db/index.server";
import { actorOf, type Person } from "./people.server";

export interface SponsorAccessChange {
  granted: string[];
  revoked: string[];
}

export async function syncSponsorMemberships(person: Person): Promise<SponsorAccessChange> {
  if (person.identitySource !== "oidc") return { granted: [], revoked: [] };
  const organisation = person.organisation;
  return writeTransaction(async (tx) => {
    const shared = organisation
      ? await tx
          .select({ studyId: t.studyShares.studyId })
          .from(t.studyShares)
          .where(eq(t.studyShares.organisation, organisation))
      : [];
    const sharedIds = new Set(shared.map((s) => s.studyId));
    const current = await tx
      .select()
      .from(t.studyMemberships)
      .where(eq(t.studyMemberships.personId, person.id));
    const change: SponsorAccessChange = { granted: [], revoked: [] };
    const actor = actorOf(person);
    for (const m of current) {
      if (m.role === "sponsor_reader" && sharedIds.has(m.studyId)) continue;
      await tx.delete(t.studyMemberships).where(and(eq(t.studyMemberships.id, m.id)));
      change.revoked.push(m.studyId);
      await appendAudit(
        {
          actor,
          action: "membership.revoke",
          entityType: "person",
          entityId: person.id,
          studyId: m.studyId,
          before: { role: m.role },
          after: { role: null },
          detail: sharedIds.has(m.studyId)
            ? "a sponsor account holds only the sponsor reader role"
            : `the study is not shared with ${organisation ?? "the person's organisation"}; checked at sign-in through OpenID Connect`,
        },
        tx,
      );
    }
    const kept = new Set(
      current.filter((m) => m.role === "sponsor_reader" && sharedIds.has(m.studyId)).map((m) => m.studyId),
    );
    for (const studyId of sharedIds) {
      if (kept.has(studyId)) continue;
      await tx
        .insert(t.studyMemberships)
        .values({ id: newId(), studyId, personId: person.id, role: "sponsor_reader" });
      change.granted.push(studyId);
      await appendAudit(
        {
          actor,
          action: "membership.grant",
          entityType: "person",
          entityId: person.id,
          studyId,
          before: { role: null },
          after: { role: "sponsor_reader" },
          detail: `the study is shared with ${organisation}; granted at sign-in through OpenID Connect`,
        },
        tx,
      );
    }
    return change;
  });
}
