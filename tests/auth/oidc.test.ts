/**
 * Sponsor sign-in through OpenID Connect: a real round trip through the fake provider
 * (oauth2-mock-server in its own process) and our callback, the study roles that follow the
 * study shares, and a refusal for each way an ID token can be wrong (OpenID Connect Core 1.0,
 * section 3.1.3.7, lists the checks).
 */
import { createServer } from "node:net";
import path from "node:path";
import { exportJWK, generateKeyPair, createLocalJWKSet, SignJWT } from "jose";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { startOidcFake } from "../../idp-fake/oidc/launch";
import { useTempDatabase } from "../support/temp-db";

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.once("error", reject);
    s.listen(0, "127.0.0.1", () => {
      const address = s.address();
      const port = typeof address === "object" && address ? address.port : 0;
      s.close(() => resolve(port));
    });
  });
}

const { dir } = useTempDatabase();
const APP = "http://127.0.0.1:5997";
const fake = await startOidcFake({ port: await freePort(), stateDir: path.join(dir, "oidc"), appUrl: APP });
Object.assign(process.env, {
  APP_URL: APP,
  OIDC_ISSUER: fake.issuerUrl,
  OIDC_CLIENT_ID: fake.clientId,
  OIDC_CLIENT_SECRET: fake.clientSecret,
});
const { finishOidcSignIn, recordSponsorSignIn, startOidcSignIn } =
  await import("../../app/.server/auth/oidc-sign-in.server");
const { verifyIdToken, nonceFor } = await import("../../app/.server/auth/oidc-token.server");
const { getCurrentUser } = await import("../../app/.server/session.server");
const { studyRoleOf } = await import("../../app/.server/people.server");
const { db, t } = await import("../../app/.server/db/index.server");
const { eq } = await import("drizzle-orm");

afterAll(async () => {
  await fake.stop();
});

beforeAll(async () => {
  await db.insert(t.studies).values([
    { id: "study-shared", code: "S-1", title: "Shared study", sponsor: "Quillmoor Therapeutics" },
    { id: "study-other", code: "S-2", title: "Not shared", sponsor: "Someone else" },
  ]);
  await db
    .insert(t.studyShares)
    .values({ id: "share-1", studyId: "study-shared", organisation: "Quillmoor Therapeutics" });
  await db.insert(t.people).values({
    id: "staff-1",
    email: "priya.lindqvist@plumbline.example",
    displayName: "Priya Lindqvist",
    identitySource: "saml",
    externalId: "priya",
  });
});

const cookieHeader = (res: Response): string =>
  res.headers
    .getSetCookie()
    .map((c) => c.split(";")[0])
    .join("; ");

/** Our login, the fake's picker, the chosen person, back at our callback: returns the callback's answer. */
async function signInAs(
  displayName: string,
  returnTo = "/",
): Promise<{ res: Response; callbackUrl: string; cookie: string }> {
  const start = await startOidcSignIn(
    new Request(`${APP}/auth/oidc/login?returnTo=${encodeURIComponent(returnTo)}`),
  );
  expect(start.status).toBe(302);
  const authorize = start.headers.get("Location") ?? "";
  expect(authorize.startsWith(`${fake.issuerUrl}/authorize?`)).toBe(true);
  const params = new URL(authorize).searchParams;
  expect(params.get("code_challenge_method")).toBe("S256");
  expect(params.get("nonce")).toBe(
    nonceFor(params.get("state") ?? "", process.env.SESSION_SECRET ?? "plumbline-local-development-secret"),
  );
  const cookie = cookieHeader(start);
  const picker = await (await fetch(authorize)).text();
  const form = new RegExp(
    `<form method="get" action="/authorize" data-person="([^"]+)">(?:(?!</form>)[\\s\\S])*Continue as ${displayName}`,
  ).exec(picker);
  if (!form) throw new Error(`no button for ${displayName} in the picker`);
  const chosen = new URL(authorize);
  chosen.searchParams.set("demo_person", form[1]);
  const back = await fetch(chosen, { redirect: "manual" });
  const callbackUrl = back.headers.get("Location") ?? "";
  expect(callbackUrl.startsWith(`${APP}/auth/oidc/callback?`)).toBe(true);
  const res = await finishOidcSignIn(new Request(callbackUrl, { headers: { Cookie: cookie } }));
  return { res, callbackUrl, cookie };
}

async function auditDetails(action: string): Promise<string[]> {
  const rows = await db.select().from(t.auditEvents).where(eq(t.auditEvents.action, action));
  return rows.map((r) => r.detail ?? "");
}

describe("sponsor sign-in through the fake OpenID Connect provider", () => {
  it("signs Sam Quill in as a sponsor reader of the shared study only, never an administrator", async () => {
    const { res } = await signInAs("Sam Quill", "/studies/study-shared/reports");
    expect(res.status).toBe(302);
    expect(res.headers.get("Location")).toBe("/studies/study-shared/reports");
    const session = res.headers.getSetCookie().find((c) => c.startsWith("plumbline_session="));
    expect(session).toBeDefined();
    // The sign-in state cookies are ended with the sign-in.
    expect(
      res.headers
        .getSetCookie()
        .filter((c) => c.startsWith("plumbline_oidc:"))
        .every((c) => /Max-Age=0/.test(c)),
    ).toBe(true);
    const user = await getCurrentUser(new Request(APP, { headers: { Cookie: session!.split(";")[0] } }));
    expect(user).toMatchObject({
      email: "sam.quill@quillmoor.example",
      identitySource: "oidc",
      organisation: "Quillmoor Therapeutics",
      isAdmin: false,
    });
    expect(await studyRoleOf(user!.id, "study-shared")).toBe("sponsor_reader");
    expect(await studyRoleOf(user!.id, "study-other")).toBeNull();
    expect(await auditDetails("membership.grant")).toContain(
      "the study is shared with Quillmoor Therapeutics; granted at sign-in through OpenID Connect",
    );
  });

  it("a replayed callback (the code already used) is refused", async () => {
    const { callbackUrl, cookie } = await signInAs("Sam Quill");
    const again = await finishOidcSignIn(new Request(callbackUrl, { headers: { Cookie: cookie } }));
    // The fake refuses the second exchange (its PKCE record of the code is gone): no session.
    expect(again.headers.get("Location")).toMatch(/^\/sign-in\?error=/);
    expect(again.headers.getSetCookie().some((c) => c.startsWith("plumbline_session="))).toBe(false);
  });

  it("a callback without this browser's state cookie is refused", async () => {
    const { callbackUrl } = await signInAs("Sam Quill");
    const res = await finishOidcSignIn(new Request(callbackUrl));
    expect(res.headers.get("Location")).toBe("/sign-in?error=replayed");
  });

  it("a reader of an organisation the study is not shared with gets no study", async () => {
    const { res } = await signInAs("Ines Varga");
    expect(res.status).toBe(302);
    const [ines] = await db
      .select()
      .from(t.people)
      .where(eq(t.people.email, "ines.varga@harrowgate-bio.example"));
    expect(ines.organisation).toBe("Harrowgate Biologics");
    expect(
      await db.select().from(t.studyMemberships).where(eq(t.studyMemberships.personId, ines.id)),
    ).toEqual([]);
  });

  it("removing a share ends the role at once, and the next sign-in removes the membership (audited)", async () => {
    const [sam] = await db.select().from(t.people).where(eq(t.people.email, "sam.quill@quillmoor.example"));
    await db.delete(t.studyShares).where(eq(t.studyShares.id, "share-1"));
    expect(await studyRoleOf(sam.id, "study-shared")).toBeNull();
    await signInAs("Sam Quill");
    expect(await db.select().from(t.studyMemberships).where(eq(t.studyMemberships.personId, sam.id))).toEqual(
      [],
    );
    expect(
      (await auditDetails("membership.revoke")).some((d) =>
        d.includes("not shared with Quillmoor Therapeutics"),
      ),
    ).toBe(true);
    await db
      .insert(t.studyShares)
      .values({ id: "share-1", studyId: "study-shared", organisation: "Quillmoor Therapeutics" });
  });

  it("a sponsor provider cannot sign in as a staff account with the same e-mail", async () => {
    const claims = {
      iss: fake.issuerUrl,
      sub: "x",
      email: "priya.lindqvist@plumbline.example",
      name: "Priya",
      organisation: "Quillmoor Therapeutics",
    };
    await expect(recordSponsorSignIn(claims)).rejects.toMatchObject({ code: "staff-account" });
  });

  it("a token with a known e-mail but another subject, or another issuer, does not take the account over (refused, audited)", async () => {
    await signInAs("Sam Quill");
    const [sam] = await db.select().from(t.people).where(eq(t.people.email, "sam.quill@quillmoor.example"));
    expect(sam).toMatchObject({ identityIssuer: fake.issuerUrl, externalId: "sponsor-sponsor-reader" });
    const intruder = {
      sub: "intruder-7",
      email: "Sam.Quill@quillmoor.example",
      name: "Not Sam",
      organisation: "Harrowgate Biologics",
    };
    await expect(recordSponsorSignIn({ ...intruder, iss: fake.issuerUrl })).rejects.toMatchObject({
      code: "subject-mismatch",
    });
    await expect(
      recordSponsorSignIn({
        ...intruder,
        sub: "sponsor-sponsor-reader",
        iss: "https://other-provider.example",
      }),
    ).rejects.toMatchObject({ code: "subject-mismatch" });
    const [after] = await db.select().from(t.people).where(eq(t.people.id, sam.id));
    expect(after).toMatchObject({
      displayName: "Sam Quill",
      organisation: "Quillmoor Therapeutics",
      externalId: "sponsor-sponsor-reader",
    });
  });

  it("an account made before issuers were recorded is bound at its next sign-in only when the subject matches", async () => {
    await db.insert(t.people).values([
      {
        id: "legacy-1",
        email: "old.reader@quillmoor.example",
        displayName: "Old Reader",
        identitySource: "oidc",
        externalId: "legacy-sub",
        organisation: "Quillmoor Therapeutics",
      },
      {
        id: "legacy-2",
        email: "other.reader@quillmoor.example",
        displayName: "Other Reader",
        identitySource: "oidc",
        externalId: "legacy-sub-2",
        organisation: "Quillmoor Therapeutics",
        lastSignInAt: "2026-11-01T10:00:00.000Z",
      },
      // Made in advance (as the demo seed does), never signed in to: its placeholder subject is replaced at the first sign-in.
      {
        id: "legacy-3",
        email: "new.reader@quillmoor.example",
        displayName: "New Reader",
        identitySource: "oidc",
        externalId: "new.reader@quillmoor.example",
        organisation: "Quillmoor Therapeutics",
      },
    ]);
    const claims = {
      iss: fake.issuerUrl,
      email: "old.reader@quillmoor.example",
      name: "Old Reader",
      organisation: "Quillmoor Therapeutics",
    };
    const person = await recordSponsorSignIn({ ...claims, sub: "legacy-sub" });
    expect(person).toMatchObject({ id: "legacy-1", identityIssuer: fake.issuerUrl });
    await expect(
      recordSponsorSignIn({ ...claims, email: "other.reader@quillmoor.example", sub: "someone-else" }),
    ).rejects.toMatchObject({ code: "subject-mismatch" });
    expect(
      await recordSponsorSignIn({ ...claims, email: "new.reader@quillmoor.example", sub: "new-sub" }),
    ).toMatchObject({ id: "legacy-3", identityIssuer: fake.issuerUrl, externalId: "new-sub" });
    // From then on it is bound: another subject is refused.
    await expect(
      recordSponsorSignIn({ ...claims, email: "new.reader@quillmoor.example", sub: "other-sub" }),
    ).rejects.toMatchObject({ code: "subject-mismatch" });
  });

  it("the callback refuses the takeover with a clear message and an audit event", async () => {
    // Sam's account is bound to the fake's subject; make it look bound to another subject.
    await db
      .update(t.people)
      .set({ externalId: "sponsor-sam-elsewhere" })
      .where(eq(t.people.email, "sam.quill@quillmoor.example"));
    const { res } = await signInAs("Sam Quill");
    expect(res.headers.get("Location")).toBe("/sign-in?error=subject-mismatch");
    expect(res.headers.getSetCookie().some((c) => c.startsWith("plumbline_session="))).toBe(false);
    expect((await auditDetails("auth.sign_in_refused")).some((d) => d.startsWith("subject-mismatch:"))).toBe(
      true,
    );
    await db
      .update(t.people)
      .set({ externalId: "sponsor-sponsor-reader" })
      .where(eq(t.people.email, "sam.quill@quillmoor.example"));
  });

  it("claims without an organisation or with an unverified e-mail are refused", async () => {
    await expect(recordSponsorSignIn({ sub: "y", email: "a@b.example" })).rejects.toMatchObject({
      code: "no-organisation",
    });
    await expect(
      recordSponsorSignIn({ sub: "y", email: "a@b.example", email_verified: false, organisation: "Q" }),
    ).rejects.toMatchObject({ code: "incomplete" });
  });
});

describe("ID token verification refuses each kind of wrong token", () => {
  const ISS = "http://provider.example";
  const AUD = "plumbline";
  const NONCE = "nonce-1";
  let good: CryptoKey;
  let other: CryptoKey;
  let keys: ReturnType<typeof createLocalJWKSet>;

  beforeAll(async () => {
    const pair = await generateKeyPair("RS256");
    good = pair.privateKey;
    other = (await generateKeyPair("RS256")).privateKey;
    keys = createLocalJWKSet({ keys: [{ ...(await exportJWK(pair.publicKey)), kid: "k1", alg: "RS256" }] });
  });

  const token = (claims: Record<string, unknown> = {}, key: CryptoKey = good, kid = "k1") => {
    const now = Math.floor(Date.now() / 1000);
    return new SignJWT({
      sub: "s",
      email: "e@x.example",
      nonce: NONCE,
      iss: ISS,
      aud: AUD,
      iat: now,
      exp: now + 300,
      ...claims,
    })
      .setProtectedHeader({ alg: "RS256", kid })
      .sign(key);
  };
  const verify = (jwt: string, nonce = NONCE) =>
    verifyIdToken(jwt, { issuer: ISS, clientId: AUD, keys, nonce });

  it("accepts a good token", async () => {
    expect((await verify(await token())).sub).toBe("s");
  });
  it("signed with another key: foreign-signed", async () => {
    await expect(verify(await token({}, other, "k9"))).rejects.toMatchObject({ code: "foreign-signed" });
    await expect(verify(await token({}, other, "k1"))).rejects.toMatchObject({ code: "tampered" });
  });
  it("payload changed after signing: tampered", async () => {
    const [h, , s] = (await token()).split(".");
    const body = Buffer.from(
      JSON.stringify({
        sub: "s",
        email: "boss@x.example",
        nonce: NONCE,
        iss: ISS,
        aud: AUD,
        iat: Math.floor(Date.now() / 1000),
        exp: Math.floor(Date.now() / 1000) + 300,
      }),
    ).toString("base64url");
    await expect(verify(`${h}.${body}.${s}`)).rejects.toMatchObject({ code: "tampered" });
  });
  it("unsigned (alg none): tampered", async () => {
    const h = Buffer.from(JSON.stringify({ alg: "none" })).toString("base64url");
    const b = Buffer.from(JSON.stringify({ sub: "s", iss: ISS, aud: AUD, nonce: NONCE })).toString(
      "base64url",
    );
    await expect(verify(`${h}.${b}.`)).rejects.toMatchObject({ code: "tampered" });
  });
  it("expired: expired", async () => {
    const now = Math.floor(Date.now() / 1000);
    await expect(verify(await token({ exp: now - 60, iat: now - 400 }))).rejects.toMatchObject({
      code: "expired",
    });
  });
  it("issued too long ago: expired", async () => {
    const now = Math.floor(Date.now() / 1000);
    await expect(verify(await token({ iat: now - 3600, exp: now + 3600 }))).rejects.toMatchObject({
      code: "expired",
    });
  });
  it("another issuer: wrong-issuer", async () => {
    await expect(verify(await token({ iss: "http://evil.example" }))).rejects.toMatchObject({
      code: "wrong-issuer",
    });
  });
  it("another audience, or several without us as the authorized party: wrong-audience", async () => {
    await expect(verify(await token({ aud: "someone-else" }))).rejects.toMatchObject({
      code: "wrong-audience",
    });
    await expect(verify(await token({ aud: [AUD, "someone-else"] }))).rejects.toMatchObject({
      code: "wrong-audience",
    });
  });
  it("another sign-in's nonce, or none: replayed", async () => {
    await expect(verify(await token(), "nonce-2")).rejects.toMatchObject({ code: "replayed" });
    await expect(verify(await token({ nonce: undefined }))).rejects.toMatchObject({ code: "replayed" });
  });
});
