/**
 * The service provider's verdict on SAML responses: a good one signs the person in (created
 * from the assertion's attributes, administrator flag from the groups attribute); tampered,
 * foreign-signed, replayed, expired, wrong-audience and wrong-issuer ones are refused with
 * their own message on the sign-in page and an `auth.sign_in_refused` audit event.
 */
import { afterEach, describe, expect, it, vi } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import {
  acsPost,
  authnRequestId,
  cookiePair,
  makeKeyPair,
  signedResponse,
  type TestUser,
} from "./saml-fixtures";

const { dir } = useTempDatabase();
const trusted = makeKeyPair(dir, "trusted-idp");
const stranger = makeKeyPair(dir, "stranger");
const APP = "http://127.0.0.1:5999";
const IDP_ISSUER = "urn:plumbline:idp-fake";
const SP = "urn:plumbline:sp";
Object.assign(process.env, {
  APP_URL: APP,
  // Nothing listens on the discard port: the identity provider counts as unreachable.
  SAML_IDP_SSO_URL: "http://127.0.0.1:9/saml/sso",
  SAML_IDP_SLO_URL: "http://127.0.0.1:9/saml/slo",
  SAML_IDP_ISSUER: IDP_ISSUER,
  SAML_SP_ISSUER: SP,
  SAML_IDP_CERT_FILE: trusted.certFile,
  SAML_CLOCK_SKEW_MS: "2000",
});

const { bindRequest, finishSamlSignIn, signInPage, startSamlSignIn } =
  await import("../../app/.server/auth/sign-in.server");
const { samlSetup } = await import("../../app/.server/auth/saml-setup.server");
const { REFUSAL_MESSAGES } = await import("../../app/.server/auth/refusal.server");
const { listAuditEvents } = await import("../../app/.server/audit.server");
const { getCurrentUser } = await import("../../app/.server/session.server");
const { db, t } = await import("../../app/.server/db/index.server");
const { eq } = await import("drizzle-orm");

const priya: TestUser = {
  email: "priya.lindqvist@plumbline.example",
  displayName: "Priya Lindqvist",
  organisation: "Plumbline demo CRO",
  groups: ["staff"],
};
const morgan: TestUser = {
  email: "morgan.reyes@plumbline.example",
  displayName: "Morgan Reyes",
  organisation: "Plumbline demo CRO",
  groups: ["staff", "plumbline-admins"],
};

/** This browser's binding to the last request it started (the cookie the login route sets). */
let boundCookie = "";

/** Starts a sign-in as the login route does and returns the AuthnRequest id it remembered; this browser is bound to it. */
async function freshRequestId(): Promise<string> {
  const id = authnRequestId(await samlSetup().signIn.getAuthorizeUrlAsync("/", "127.0.0.1:5999", {}));
  boundCookie = cookiePair(await bindRequest({ id, reauth: null }));
  return id;
}

/** The browser's post of a response to our ACS, with its cookie. */
const acs = (samlResponse: string, relayState = "/"): Request =>
  acsPost(APP, samlResponse, relayState, boundCookie);

async function goodResponse(user: TestUser, inResponseTo?: string): Promise<string> {
  return signedResponse({
    signer: trusted,
    issuer: IDP_ISSUER,
    audience: SP,
    acsUrl: `${APP}/auth/saml/acs`,
    inResponseTo: inResponseTo ?? (await freshRequestId()),
    user,
  });
}

async function expectRefused(
  response: Response,
  code: keyof typeof REFUSAL_MESSAGES,
  reason: RegExp,
): Promise<void> {
  expect(response.status).toBe(302);
  const location = response.headers.get("Location");
  expect(location).toBe(`/sign-in?error=${code}`);
  expect(response.headers.get("Set-Cookie")).toBeNull();
  const page = await signInPage(new Request(`${APP}${location}`));
  expect(page.signedIn).toBe(false);
  if (!page.signedIn) expect(page.error).toEqual({ code, message: REFUSAL_MESSAGES[code] });
  const [event] = await listAuditEvents({ action: "auth.sign_in_refused", limit: 1 });
  expect(event.entityType).toBe("sign_in");
  expect(event.actorId).toBeNull();
  expect(event.detail).toMatch(new RegExp(`^${code}: `));
  expect(event.detail).toMatch(reason);
}

afterEach(() => {
  vi.useRealTimers();
});

describe("a response this browser did not ask for (login CSRF)", () => {
  it("is refused without the cookie of the browser that started the sign-in, or with another request's", async () => {
    const samlResponse = await goodResponse(priya);
    await expectRefused(
      await finishSamlSignIn(acsPost(APP, samlResponse)),
      "not-this-browser",
      /which this browser did not start/,
    );
    const otherBrowser = cookiePair(await bindRequest({ id: "_another-request", reauth: null }));
    const samlResponse2 = await goodResponse(priya);
    await expectRefused(
      await finishSamlSignIn(acsPost(APP, samlResponse2, "/", otherBrowser)),
      "not-this-browser",
      /which this browser did not start/,
    );
  });
});

describe("a good response", () => {
  it("signs the person in, creating them from the attributes, administrator from the groups", async () => {
    const response = await finishSamlSignIn(acs(await goodResponse(morgan), "/admin/people"));
    expect(response.status).toBe(302);
    expect(response.headers.get("Location")).toBe("/admin/people");
    const cookie = cookiePair(response.headers.get("Set-Cookie"));
    const user = await getCurrentUser(new Request(`${APP}/`, { headers: { Cookie: cookie } }));
    expect(user).toMatchObject({
      email: morgan.email,
      displayName: "Morgan Reyes",
      organisation: "Plumbline demo CRO",
      isAdmin: true,
      identitySource: "saml",
      nameId: morgan.email,
      sessionIndex: "4242",
    });
    const [person] = await db.select().from(t.people).where(eq(t.people.email, morgan.email));
    expect(person).toMatchObject({ displayName: "Morgan Reyes", isAdmin: true, externalId: morgan.email });
    const [signIn] = await listAuditEvents({ action: "auth.sign_in", limit: 1 });
    expect(signIn.actorId).toBe(person.id);
  });

  it("a single group arrives as one value; without plumbline-admins there is no administrator flag", async () => {
    const response = await finishSamlSignIn(acs(await goodResponse(priya), "//elsewhere.example/"));
    expect(response.headers.get("Location")).toBe("/");
    const user = await getCurrentUser(
      new Request(`${APP}/`, { headers: { Cookie: cookiePair(response.headers.get("Set-Cookie")) } }),
    );
    expect(user).toMatchObject({ email: priya.email, displayName: "Priya Lindqvist", isAdmin: false });
  });
});

describe("refused responses", () => {
  it("tampered: content changed after signing", async () => {
    const xml = Buffer.from(await goodResponse(priya), "base64").toString("utf8");
    const altered = xml.replace("Priya Lindqvist", "Mallory Lindqvist");
    expect(altered).not.toBe(xml);
    const response = await finishSamlSignIn(acs(Buffer.from(altered).toString("base64")));
    await expectRefused(response, "tampered", /Invalid document signature/);
  });

  it("foreign-signed: intact, but signed with a key we do not trust", async () => {
    const forged = await signedResponse({
      signer: stranger,
      issuer: IDP_ISSUER,
      audience: SP,
      acsUrl: `${APP}/auth/saml/acs`,
      inResponseTo: await freshRequestId(),
      user: morgan,
    });
    const response = await finishSamlSignIn(acs(forged));
    await expectRefused(response, "foreign-signed", /untrusted key/);
    const [event] = await listAuditEvents({ action: "auth.sign_in_refused", limit: 1 });
    expect(event.actorName).toBe(`${morgan.email} (not signed in)`);
  });

  it("replayed: the same response a second time", async () => {
    const samlResponse = await goodResponse(priya);
    expect((await finishSamlSignIn(acs(samlResponse))).headers.get("Location")).toBe("/");
    await expectRefused(await finishSamlSignIn(acs(samlResponse)), "replayed", /InResponseTo is not valid/);
  });

  it("replayed: two copies at once, only one is accepted", async () => {
    const samlResponse = await goodResponse(priya);
    const results = await Promise.all([1, 2, 3].map(() => finishSamlSignIn(acs(samlResponse))));
    const accepted = results.filter((r) => r.headers.get("Set-Cookie"));
    expect(accepted).toHaveLength(1);
    for (const r of results.filter((x) => !x.headers.get("Set-Cookie"))) {
      expect(r.headers.get("Location")).toBe("/sign-in?error=replayed");
    }
  });

  it("replayed: a response that answers no request made here", async () => {
    const unsolicited = await signedResponse({
      signer: trusted,
      issuer: IDP_ISSUER,
      audience: SP,
      acsUrl: `${APP}/auth/saml/acs`,
      user: priya,
    });
    await expectRefused(await finishSamlSignIn(acs(unsolicited)), "replayed", /InResponseTo is missing/);
  });

  it("expired: issued ten minutes ago with a two-minute lifetime", async () => {
    const inResponseTo = await freshRequestId();
    vi.useFakeTimers({ toFake: ["Date"] });
    vi.setSystemTime(Date.now() - 10 * 60 * 1000);
    const old = await signedResponse({
      signer: trusted,
      issuer: IDP_ISSUER,
      audience: SP,
      acsUrl: `${APP}/auth/saml/acs`,
      inResponseTo,
      user: priya,
      lifetimeInSeconds: 120,
    });
    vi.useRealTimers();
    await expectRefused(await finishSamlSignIn(acs(old)), "expired", /expired|subject confirmation/i);
  });

  it("wrong audience: addressed to another application", async () => {
    const other = await signedResponse({
      signer: trusted,
      issuer: IDP_ISSUER,
      audience: "urn:another-application:sp",
      acsUrl: `${APP}/auth/saml/acs`,
      inResponseTo: await freshRequestId(),
      user: priya,
    });
    await expectRefused(await finishSamlSignIn(acs(other)), "wrong-audience", /audience mismatch/);
  });

  it("wrong issuer: signed with the trusted key but naming another identity provider", async () => {
    const other = await signedResponse({
      signer: trusted,
      issuer: "urn:another-provider:idp",
      audience: SP,
      acsUrl: `${APP}/auth/saml/acs`,
      inResponseTo: await freshRequestId(),
      user: priya,
    });
    await expectRefused(await finishSamlSignIn(acs(other)), "wrong-issuer", /urn:another-provider:idp/);
  });

  it("other: a post without any SAMLResponse", async () => {
    const empty = new Request(`${APP}/auth/saml/acs`, {
      method: "POST",
      headers: { "Content-Type": "application/x-www-form-urlencoded" },
      body: "",
    });
    await expectRefused(await finishSamlSignIn(empty), "other", /no SAMLResponse/);
  });
});

describe("an identity provider that is not answering", () => {
  it("the sign-in page says so, naming its address", async () => {
    const page = await signInPage(new Request(`${APP}/sign-in`));
    expect(page).toMatchObject({
      signedIn: false,
      idp: { answering: false, origin: "http://127.0.0.1:9" },
      error: null,
    });
  });

  it("starting single sign-on returns to the sign-in page with the reason", async () => {
    const response = await startSamlSignIn(new Request(`${APP}/auth/saml/login?returnTo=/admin/audit`));
    expect(response.headers.get("Location")).toBe("/sign-in?error=unavailable&returnTo=%2Fadmin%2Faudit");
  });
});
