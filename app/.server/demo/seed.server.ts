/**
 * Seeds the invented demo study into an empty database: the study, the demo people with
 * their study roles, and the sponsor organisation it is shared with. It never touches a
 * database that already holds a study, so it cannot overwrite real data.
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { count } from "drizzle-orm";
import { z } from "zod";
import { appendAudit, SYSTEM_ACTOR } from "../audit.server";
import { db, newId, t, writeTransaction } from "../db/index.server";
import { STUDY_ROLES } from "../db/schema";
import { seedDemoDataset, seedDemoVisitsDataset } from "../datasets/demo-seed.server";
import {
  DEMO_COMPOUND,
  DEMO_INDICATION,
  DEMO_SPONSOR,
  DEMO_STUDY_CODE,
  DEMO_STUDY_TITLE,
} from "./demo-study";

const DemoPeopleFile = z.object({
  people: z.array(
    z.object({
      key: z.string(),
      email: z.email(),
      displayName: z.string(),
      organisation: z.string(),
      groups: z.array(z.string()),
      studyRole: z.enum(STUDY_ROLES).nullable(),
      /** Sponsor readers sign in through OpenID Connect, staff through SAML. */
      signIn: z.enum(["saml", "oidc"]).default("saml"),
    }),
  ),
});
export type DemoPerson = z.infer<typeof DemoPeopleFile>["people"][number];

/** The demo people, shared with the fake identity providers (idp-fake/demo-people.json). */
export function readDemoPeople(root = process.cwd()): DemoPerson[] {
  const file = path.join(root, "idp-fake", "demo-people.json");
  return DemoPeopleFile.parse(JSON.parse(readFileSync(file, "utf8"))).people;
}

export type SeedOutcome = { seeded: true; studyId: string } | { seeded: false; reason: string };

export async function seedDemoStudy(people: DemoPerson[] = readDemoPeople()): Promise<SeedOutcome> {
  const [{ studies }] = await db.select({ studies: count() }).from(t.studies);
  if (studies > 0)
    return {
      seeded: false,
      reason: `the database already holds ${studies} stud${studies === 1 ? "y" : "ies"}`,
    };
  const outcome = await writeTransaction(async (tx): Promise<SeedOutcome> => {
    const studyId = newId();
    const study = {
      id: studyId,
      code: DEMO_STUDY_CODE,
      title: DEMO_STUDY_TITLE,
      sponsor: DEMO_SPONSOR,
      compound: `${DEMO_COMPOUND.name} (${DEMO_COMPOUND.code})`,
      indication: DEMO_INDICATION,
      phase: "3",
    };
    await tx.insert(t.studies).values(study);
    await appendAudit(
      {
        actor: SYSTEM_ACTOR,
        action: "study.create",
        entityType: "study",
        entityId: studyId,
        studyId,
        after: study,
        detail: "demo seed",
      },
      tx,
    );
    for (const p of people) {
      const personId = newId();
      await tx.insert(t.people).values({
        id: personId,
        email: p.email,
        displayName: p.displayName,
        organisation: p.organisation,
        isAdmin: p.groups.includes("plumbline-admins"),
        identitySource: p.signIn,
        externalId: p.email,
      });
      await appendAudit(
        {
          actor: SYSTEM_ACTOR,
          action: "person.create",
          entityType: "person",
          entityId: personId,
          after: { email: p.email },
          detail: "demo seed",
        },
        tx,
      );
      if (p.studyRole) {
        await tx.insert(t.studyMemberships).values({ id: newId(), studyId, personId, role: p.studyRole });
        await appendAudit(
          {
            actor: SYSTEM_ACTOR,
            action: "membership.grant",
            entityType: "person",
            entityId: personId,
            studyId,
            before: { role: null },
            after: { role: p.studyRole },
            detail: "demo seed",
          },
          tx,
        );
      }
    }
    const sponsorOrg = people.find((p) => p.studyRole === "sponsor_reader")?.organisation;
    if (sponsorOrg) {
      await tx.insert(t.studyShares).values({ id: newId(), studyId, organisation: sponsorOrg });
      await appendAudit(
        {
          actor: SYSTEM_ACTOR,
          action: "study.share",
          entityType: "study",
          entityId: studyId,
          studyId,
          after: { organisation: sponsorOrg },
          detail: "demo seed",
        },
        tx,
      );
    }
    return { seeded: true, studyId };
  });
  // The data manager uploads and locks the demo dataset through the datasets service.
  if (outcome.seeded) {
    await seedDemoDataset(outcome.studyId);
    await seedDemoVisitsDataset(outcome.studyId);
  }
  return outcome;
}
