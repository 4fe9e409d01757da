/**
 * People and their study roles. A person is created on first sign-in from the identity
 * provider's attributes; an administrator then gives them roles per study.
 */
import { and, asc, eq, sql } from "drizzle-orm";
import { appendAudit, type Actor } from "./audit.server";
import { SignInRefused } from "./auth/refusal.server";
import { db, isoNow, newId, t, writeTransaction, type DbOrTx } from "./db/index.server";
import type { StudyRole } from "./db/schema";

export type Person = typeof t.people.$inferSelect;

export interface VerifiedIdentity {
  source: "saml" | "oidc";
  /** Stable subject at the provider (SAML NameID or OIDC `sub`). */
  externalId: string;
  /** The provider that vouches for the subject (SAML IdP entity id or OIDC `iss`). */
  issuer: string;
  email: string;
  displayName: string;
  organisation: string | null;
  /** From the provider's group attribute; sponsor providers never grant it. */
  isAdmin: boolean;
}

/** A signed-in person acting: unlike the system actor, always has an id. */
export type PersonActor = Actor & { id: string };

export const actorOf = (p: { id: string; displayName: string }): PersonActor => ({
  id: p.id,
  name: p.displayName,
});

/** The longest display name kept from an identity provider; longer names are cut. */
export const DISPLAY_NAME_MAX = 200;

/**
 * A display name as an identity provider sent it, made fit to show and record: control
 * characters removed, runs of white space made one space, trimmed, at most DISPLAY_NAME_MAX
 * characters (whole code points). Falls back to the e-mail address when nothing is left.
 */
export function cleanDisplayName(raw: string, email: string): string {
  const text = raw
    .replace(/[\u0000-\u001f\u007f-\u009f\u200b-\u200f\u2028-\u202e\u2066-\u2069]/g, " ")
    .replace(/\s+/g, " ")
    .trim();
  const cut = [...text].slice(0, DISPLAY_NAME_MAX).join("").trim();
  return cut.length > 0 ? cut : email;
}

/**
 * The account a verified identity belongs to. A sponsor account (OpenID Connect) is the pair
 * (issuer, subject): a token with a known e-mail but another subject, or from another issuer,
 * is refused rather than given the account. An account made before issuers were recorded is
 * bound to the issuer when the subject matches, or when nobody has signed in to it yet. Staff accounts (SAML, whose NameID is the
 * e-mail address) are found by e-mail as before, and get the issuer recorded.
 */
async function accountOf(tx: DbOrTx, identity: VerifiedIdentity, email: string): Promise<Person | undefined> {
  const [byEmail] = await tx.select().from(t.people).where(eq(t.people.email, email)).limit(1);
  if (identity.source !== "oidc") return byEmail;
  const [bySubject] = await tx
    .select()
    .from(t.people)
    .where(and(eq(t.people.identityIssuer, identity.issuer), eq(t.people.externalId, identity.externalId)))
    .limit(1);
  if (bySubject) {
    if (byEmail && byEmail.id !== bySubject.id) {
      throw new SignInRefused(
        "subject-mismatch",
        `the e-mail address ${email} belongs to another account than subject ${identity.externalId} at ${identity.issuer}`,
        email,
      );
    }
    return bySubject;
  }
  if (!byEmail) return undefined;
  // Accounts without a recorded issuer: bound when the subject matches, or when nobody ever
  // signed in to them (made in advance, e.g. by the demo seed, with a placeholder subject).
  const unbound = byEmail.identityIssuer === null && byEmail.identitySource === "oidc";
  if (unbound && (byEmail.externalId === identity.externalId || byEmail.lastSignInAt === null))
    return byEmail;
  throw new SignInRefused(
    "subject-mismatch",
    `the e-mail address ${email} is bound to subject ${byEmail.externalId} at ${byEmail.identityIssuer ?? "an earlier provider"}, not to subject ${identity.externalId} at ${identity.issuer}`,
    email,
  );
}

/**
 * Finds the person (see `accountOf`) or creates them, refreshing name, organisation and the
 * administrator flag from the identity provider, and records the sign-in in the audit trail.
 * Throws `SignInRefused` ("subject-mismatch") when the e-mail belongs to another subject.
 */
export async function recordSignIn(identity: VerifiedIdentity): Promise<Person> {
  const email = identity.email.trim().toLowerCase();
  identity = { ...identity, displayName: cleanDisplayName(identity.displayName, email) };
  return writeTransaction(async (tx) => {
    const existing = await accountOf(tx, identity, email);
    const at = isoNow();
    let person: Person;
    if (existing) {
      const changes = {
        displayName: identity.displayName,
        organisation: identity.organisation,
        isAdmin: identity.isAdmin,
        email,
        externalId: identity.externalId,
        identityIssuer: identity.issuer,
        lastSignInAt: at,
      };
      await tx.update(t.people).set(changes).where(eq(t.people.id, existing.id));
      person = { ...existing, ...changes };
      if (existing.isAdmin !== identity.isAdmin) {
        await appendAudit(
          {
            actor: actorOf(person),
            action: "person.admin_flag",
            entityType: "person",
            entityId: person.id,
            before: { isAdmin: existing.isAdmin },
            after: { isAdmin: identity.isAdmin },
            detail: "administrator flag taken from the identity provider's groups",
          },
          tx,
        );
      }
    } else {
      person = {
        id: newId(),
        email,
        displayName: identity.displayName,
        organisation: identity.organisation,
        isAdmin: identity.isAdmin,
        identitySource: identity.source,
        externalId: identity.externalId,
        identityIssuer: identity.issuer,
        createdAt: at,
        lastSignInAt: at,
      };
      await tx.insert(t.people).values(person);
      await appendAudit(
        {
          actor: actorOf(person),
          action: "person.create",
          entityType: "person",
          entityId: person.id,
          after: {
            email,
            displayName: person.displayName,
            organisation: person.organisation,
            isAdmin: person.isAdmin,
          },
          detail: `created at first sign-in through ${identity.source === "saml" ? "SAML single sign-on" : "OpenID Connect"}`,
        },
        tx,
      );
    }
    await appendAudit(
      {
        actor: actorOf(person),
        action: "auth.sign_in",
        entityType: "person",
        entityId: person.id,
        detail: identity.source,
      },
      tx,
    );
    return person;
  });
}

export async function listPeople(): Promise<Person[]> {
  return db.select().from(t.people).orderBy(asc(t.people.displayName));
}

export interface Membership {
  id: string;
  studyId: string;
  studyCode: string;
  personId: string;
  role: StudyRole;
}

export async function listMemberships(): Promise<Membership[]> {
  return db
    .select({
      id: t.studyMemberships.id,
      studyId: t.studyMemberships.studyId,
      studyCode: t.studies.code,
      personId: t.studyMemberships.personId,
      role: t.studyMemberships.role,
    })
    .from(t.studyMemberships)
    .innerJoin(t.studies, eq(t.studies.id, t.studyMemberships.studyId))
    .orderBy(asc(t.studies.code));
}

/** Every study page and API request reads the role: the query is built once (prepared). */
const membershipOf = db
  .select({
    role: t.studyMemberships.role,
    source: t.people.identitySource,
    organisation: t.people.organisation,
    sharedWith: t.studyShares.organisation,
  })
  .from(t.studyMemberships)
  .innerJoin(t.people, eq(t.people.id, t.studyMemberships.personId))
  .leftJoin(
    t.studyShares,
    and(
      eq(t.studyShares.studyId, t.studyMemberships.studyId),
      eq(t.studyShares.organisation, t.people.organisation),
    ),
  )
  .where(
    and(
      eq(t.studyMemberships.personId, sql.placeholder("personId")),
      eq(t.studyMemberships.studyId, sql.placeholder("studyId")),
    ),
  )
  .limit(1)
  .prepare();

/**
 * The person's role on one study, or null. A sponsor account (signed in through OpenID Connect)
 * holds at most the sponsor reader role, and only while the study is shared with its
 * organisation, whatever the membership table says.
 */
export async function studyRoleOf(personId: string, studyId: string): Promise<StudyRole | null> {
  const [row] = await membershipOf.all({ personId, studyId });
  if (!row) return null;
  if (row.source !== "oidc") return row.role;
  return row.role === "sponsor_reader" && row.organisation !== null && row.sharedWith === row.organisation
    ? row.role
    : null;
}

/**
 * Gives a person a role on a study (replacing any role they had there) or, with `role: null`,
 * removes them from the study. Audited with before and after. Refuses (`RoleChangeRefused`) an
 * unknown person or study (404) and a grant to oneself (403, audited).
 */
export class RoleChangeRefused extends Error {
  constructor(
    readonly status: 400 | 403 | 404,
    message: string,
  ) {
    super(message);
    this.name = "RoleChangeRefused";
  }
}

export async function setStudyRole(
  actor: Actor,
  studyId: string,
  personId: string,
  role: StudyRole | null,
): Promise<void> {
  const outcome = await writeTransaction(async (tx): Promise<"self-grant" | "done"> => {
    const [person] = await tx
      .select({ id: t.people.id })
      .from(t.people)
      .where(eq(t.people.id, personId))
      .limit(1);
    if (!person)
      throw new RoleChangeRefused(
        404,
        `There is no person with id ${personId.slice(0, 80)}; reload the page and choose someone from the list.`,
      );
    const [study] = await tx
      .select({ id: t.studies.id })
      .from(t.studies)
      .where(eq(t.studies.id, studyId))
      .limit(1);
    if (!study)
      throw new RoleChangeRefused(
        404,
        `There is no study with id ${studyId.slice(0, 80)}; reload the page and choose a study from the list.`,
      );
    if (role !== null && actor.id === personId) {
      // Segregation of duties: nobody gives themselves a study role (an administrator could
      // otherwise grant himself the biostatistician role and approve a plan). Another
      // administrator grants it. Removing one's own role is allowed.
      await appendAudit(
        {
          actor,
          action: "membership.self_grant_refused",
          entityType: "person",
          entityId: personId,
          studyId,
          after: { role },
          detail: "another administrator must grant this role",
        },
        tx,
      );
      return "self-grant" as const;
    }
    const [current] = await tx
      .select()
      .from(t.studyMemberships)
      .where(and(eq(t.studyMemberships.personId, personId), eq(t.studyMemberships.studyId, studyId)))
      .limit(1);
    const before = current?.role ?? null;
    if (before === role) return "done";
    if (current) await tx.delete(t.studyMemberships).where(eq(t.studyMemberships.id, current.id));
    if (role) {
      await tx
        .insert(t.studyMemberships)
        .values({ id: newId(), studyId, personId, role, grantedBy: actor.id });
    }
    await appendAudit(
      {
        actor,
        action: role ? "membership.grant" : "membership.revoke",
        entityType: "person",
        entityId: personId,
        studyId,
        before: { role: before },
        after: { role },
      },
      tx,
    );
    return "done";
  });
  if (outcome === "self-grant") {
    throw new RoleChangeRefused(
      403,
      "You cannot give yourself a role on a study: another administrator must grant it (segregation of duties). The attempt is recorded in the audit trail.",
    );
  }
}

/** Who works on a study, by role. */
/** The study overview reads its team on every visit: the query is built once (prepared). */
const teamOf = db
  .select({
    displayName: t.people.displayName,
    organisation: t.people.organisation,
    role: t.studyMemberships.role,
  })
  .from(t.studyMemberships)
  .innerJoin(t.people, eq(t.people.id, t.studyMemberships.personId))
  .where(eq(t.studyMemberships.studyId, sql.placeholder("studyId")))
  .orderBy(asc(t.studyMemberships.role), asc(t.people.displayName))
  .prepare();

export async function listStudyTeam(
  studyId: string,
): Promise<{ displayName: string; organisation: string | null; role: StudyRole }[]> {
  return teamOf.all({ studyId });
}
