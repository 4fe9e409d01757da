/**
 * Signing in and out through the staff identity provider (SAML 2.0), as the route modules use
 * it. remix-auth does not keep the user in a session: after the strategy has verified the
 * response, `finishSamlSignIn` records the sign-in and starts Plumbline's own session.
 */
import type { Profile } from "@node-saml/node-saml";
import { sql } from "drizzle-orm";
import { eq } from "drizzle-orm";
import { createCookie, redirect } from "react-router";
import { Authenticator } from "remix-auth";
import { appendAudit, SYSTEM_ACTOR, type Actor } from "../audit.server";
import { config, servedOverHttps } from "../config.server";
import { db, t } from "../db/index.server";
import { actorOf, recordSignIn, type Person, type VerifiedIdentity } from "../people.server";
import { confirmSignIn, endSession, getCurrentUser, safeReturnTo, startSession } from "../session.server";
import { withReauthOutcome } from "../signatures.server";
import { isRefusalCode, REFUSAL_MESSAGES, SignInRefused, type RefusalCode } from "./refusal.server";
import { withSavedIds } from "./saml-cache.server";
import { NAME_ID_FORMAT, REQUEST_ID_LIFETIME_MS, SamlSetupError, samlSetup } from "./saml-setup.server";
import { SamlStrategy } from "./saml-strategy.server";

export interface SamlSignIn {
  person: Person;
  nameId: string;
  sessionIndex?: string;
  returnTo: string;
  /** Set when this was a fresh sign-in confirming the person of an existing session (before signing). */
  reauth: { sessionId: string } | null;
}

/**
 * Binds a SAML request to the browser that started it (login CSRF): the request id, and for a
 * fresh sign-in before signing the session it must confirm, in a signed, short-lived cookie.
 * The assertion consumer service accepts only a response to the request named in this
 * browser's cookie. The identity provider posts the response from its own site, so over HTTPS
 * the cookie is SameSite=None (and Secure); over plain HTTP (local use, where the identity
 * provider is on the same site) it is Lax.
 */
const requestCookie = createCookie("plumbline_saml_request", {
  httpOnly: true,
  path: "/auth/saml",
  sameSite: servedOverHttps ? "none" : "lax",
  secure: servedOverHttps,
  maxAge: Math.floor(REQUEST_ID_LIFETIME_MS / 1000),
  secrets: [config.SESSION_SECRET],
});

export interface RequestBinding {
  id: string;
  reauth: { personId: string; sessionId: string } | null;
}

/** The Set-Cookie value that binds this browser to a request it starts (exported for tests that start requests themselves). */
export function bindRequest(binding: RequestBinding): Promise<string> {
  return requestCookie.serialize(binding);
}

function isBinding(value: unknown): value is RequestBinding {
  if (!value || typeof value !== "object") return false;
  const v = value as Record<string, unknown>;
  const reauth = v.reauth as Record<string, unknown> | null | undefined;
  return (
    typeof v.id === "string" &&
    (reauth === null ||
      (typeof reauth === "object" &&
        typeof reauth?.personId === "string" &&
        typeof reauth?.sessionId === "string"))
  );
}

/** A fresh sign-in before signing that the identity provider answered for another person. */
class DifferentPerson extends Error {
  constructor(
    readonly personId: string,
    readonly claimedNameId: string,
    readonly returnTo: string,
  ) {
    super(`re-authentication as ${claimedNameId} for another person's session`);
  }
}

/** A single-valued attribute arrives as a string, a multi-valued one as an array (or a string when it has one value). */
function values(profile: Profile, name: string): string[] {
  const raw = (profile.attributes as Record<string, unknown> | undefined)?.[name] ?? profile[name];
  const list = Array.isArray(raw) ? raw : raw === undefined || raw === null ? [] : [raw];
  return list
    .filter((v): v is string => typeof v === "string")
    .map((v) => v.trim())
    .filter((v) => v.length > 0);
}

/** The person the verified assertion describes, from its NameID and attributes. */
export function identityFromProfile(
  profile: Profile,
  adminGroup: string,
  idpIssuer: string,
): VerifiedIdentity {
  const email =
    values(profile, "email")[0] ??
    values(profile, "mail")[0] ??
    (profile.nameID?.includes("@") ? profile.nameID : undefined);
  if (!email || !profile.nameID) {
    throw new SignInRefused(
      "incomplete",
      "the assertion carried no e-mail address or NameID",
      profile.nameID ?? null,
    );
  }
  const groups = values(profile, "groups");
  return {
    source: "saml",
    externalId: profile.nameID,
    issuer: idpIssuer,
    email,
    displayName: values(profile, "displayName")[0] ?? email,
    organisation: values(profile, "organisation")[0] ?? null,
    isAdmin: groups.includes(adminGroup),
  };
}

let authenticator: Authenticator<SamlSignIn> | null = null;

/** The remix-auth authenticator with the SAML strategy, built on first use. */
function auth(): Authenticator<SamlSignIn> {
  if (authenticator) return authenticator;
  const setup = samlSetup();
  const strategy = new SamlStrategy<SamlSignIn>(
    {
      saml: setup.signIn,
      freshSaml: setup.freshSignIn,
      trustedCert: setup.trustedCert,
      idpIssuer: setup.idpIssuer,
    },
    async ({ profile, requestId, relayState, request }) => {
      const bound: unknown = await requestCookie.parse(request.headers.get("Cookie"));
      if (!isBinding(bound) || bound.id !== requestId) {
        throw new SignInRefused(
          "not-this-browser",
          `the response answers request ${requestId}, which this browser did not start (or its cookie expired)`,
          profile.nameID ?? null,
          requestId,
        );
      }
      const identity = identityFromProfile(profile, setup.adminGroup, setup.idpIssuer);
      const returnTo = safeReturnTo(relayState);
      if (bound.reauth) {
        // A fresh sign-in must confirm the person already signed in: same identity provider, same subject.
        const [signedIn] = await db
          .select()
          .from(t.people)
          .where(eq(t.people.id, bound.reauth.personId))
          .limit(1);
        const same =
          signedIn?.identitySource === "saml" &&
          signedIn.externalId === identity.externalId &&
          (signedIn.identityIssuer ?? identity.issuer) === identity.issuer;
        if (!same) throw new DifferentPerson(bound.reauth.personId, identity.externalId, returnTo);
      }
      const person = await recordSignIn(identity);
      return {
        person,
        nameId: profile.nameID,
        sessionIndex: profile.sessionIndex,
        returnTo,
        reauth: bound.reauth ? { sessionId: bound.reauth.sessionId } : null,
      };
    },
  );
  authenticator = new Authenticator<SamlSignIn>().use(strategy);
  return authenticator;
}

export type IdpStatus = { answering: true } | { answering: false; origin: string };

/** Whether the identity provider answers at all (any HTTP answer counts) within a short time. */
export async function identityProviderStatus(timeoutMs = 1500): Promise<IdpStatus> {
  const origin = new URL(config.SAML_IDP_SSO_URL).origin;
  try {
    const res = await fetch(config.SAML_IDP_SSO_URL, {
      redirect: "manual",
      signal: AbortSignal.timeout(timeoutMs),
    });
    await res.body?.cancel();
    return { answering: true };
  } catch {
    return { answering: false, origin };
  }
}

function refusedActor(claimedEmail: string | null): Actor {
  return claimedEmail ? { id: null, name: `${claimedEmail} (not signed in)` } : SYSTEM_ACTOR;
}

/** Records the refusal and sends the visitor back to the sign-in page with its reason. */
export async function refuseSignIn(refusal: SignInRefused): Promise<Response> {
  await appendAudit({
    actor: refusedActor(refusal.claimedEmail),
    action: "auth.sign_in_refused",
    entityType: "sign_in",
    entityId: refusal.requestId,
    detail: `${refusal.code}: ${refusal.reason}`.slice(0, 1000),
  });
  return redirect(`/sign-in?error=${refusal.code}`);
}

/** GET /auth/saml/login: off to the identity provider, or back to sign-in when it is not answering. */
export async function startSamlSignIn(request: Request): Promise<Response> {
  const url = new URL(request.url);
  const returnTo = safeReturnTo(url.searchParams.get("returnTo"));
  const status = await identityProviderStatus();
  if (!status.answering)
    return redirect(`/sign-in?error=unavailable&returnTo=${encodeURIComponent(returnTo)}`);
  const fresh = url.searchParams.get("fresh") === "1";
  // A fresh sign-in of someone signed in confirms that person (before a signature); otherwise it is an ordinary sign-in.
  const current = fresh ? await getCurrentUser(request) : null;
  const start = new Request(
    `${url.origin}${url.pathname}?returnTo=${encodeURIComponent(returnTo)}${fresh ? "&fresh=1" : ""}`,
    { method: "GET" },
  );
  const { outcome, saved } = await withSavedIds(() => auth().authenticate("saml", start));
  const thrown = "thrown" in outcome ? outcome.thrown : null;
  if (thrown instanceof Response) {
    const [id] = saved;
    if (!id) throw new Error("The SAML strategy redirected without saving its request id.");
    thrown.headers.append(
      "Set-Cookie",
      await bindRequest({
        id,
        reauth: current ? { personId: current.id, sessionId: current.sessionId } : null,
      }),
    );
    return thrown;
  }
  if (thrown instanceof SamlSetupError) {
    console.error(thrown.message);
    return redirect("/sign-in?error=misconfigured");
  }
  if (thrown) throw thrown;
  throw new Error("The SAML strategy did not redirect to the identity provider.");
}

/**
 * POST /auth/saml/acs: verifies the identity provider's response, records the sign-in and
 * starts a session (a fresh session id), then follows the return path. A refused response
 * goes back to the sign-in page with its reason and leaves an audit event.
 */
export async function finishSamlSignIn(request: Request): Promise<Response> {
  let signIn: SamlSignIn;
  try {
    signIn = await auth().authenticate("saml", request);
  } catch (error) {
    if (error instanceof DifferentPerson) return refuseDifferentPerson(error);
    if (error instanceof SignInRefused) return refuseSignIn(error);
    if (error instanceof Response) throw error;
    const reason = error instanceof Error ? error.message : String(error);
    if (error instanceof SamlSetupError) console.error(reason);
    return refuseSignIn(
      new SignInRefused(error instanceof SamlSetupError ? "misconfigured" : "other", reason),
    );
  }
  // The request is answered: its binding cookie is of no further use (sent after the session cookie).
  const cleared = await requestCookie.serialize("", { maxAge: 0 });
  const headers = new Headers();
  const saml = { nameId: signIn.nameId, sessionIndex: signIn.sessionIndex };
  if (signIn.reauth && (await confirmSignIn(signIn.reauth.sessionId, signIn.person.id, saml))) {
    await appendAudit({
      actor: actorOf(signIn.person),
      action: "auth.reauthenticate",
      entityType: "person",
      entityId: signIn.person.id,
      detail: "fresh sign-in at the identity provider confirmed the same person (before signing)",
    });
    headers.append("Set-Cookie", cleared);
    return redirect(withReauthOutcome(signIn.returnTo, "done"), { headers });
  }
  headers.append("Set-Cookie", await startSession(request, signIn.person.id, saml));
  headers.append("Set-Cookie", cleared);
  return redirect(signIn.returnTo, { headers });
}

/**
 * A fresh sign-in answered for another person than the one signed in: refused and audited,
 * and the existing session stays exactly as it was (still signed in as before, not fresh).
 */
async function refuseDifferentPerson(refusal: DifferentPerson): Promise<Response> {
  const [person] = await db
    .select({ id: t.people.id, displayName: t.people.displayName })
    .from(t.people)
    .where(eq(t.people.id, refusal.personId))
    .limit(1);
  await appendAudit({
    actor: person ? actorOf(person) : SYSTEM_ACTOR,
    action: "auth.reauth_refused",
    entityType: "person",
    entityId: refusal.personId,
    detail: `the identity provider confirmed ${refusal.claimedNameId.slice(0, 200)}, not the person signed in; the session was kept unchanged`,
  });
  return redirect(withReauthOutcome(refusal.returnTo, "different-person"));
}

/**
 * POST /sign-out: ends the Plumbline session at once, then, for a SAML session, asks the
 * identity provider to end its session too (single logout). When the identity provider is
 * not answering, the visitor lands on the signed-out page straight away.
 */
export async function signOut(request: Request): Promise<Response> {
  const user = await getCurrentUser(request);
  const cookie = await endSession(request);
  const headers = { "Set-Cookie": cookie };
  if (!user) return redirect("/sign-in?signedOut=app", { headers });
  await appendAudit({
    actor: actorOf(user),
    action: "auth.sign_out",
    entityType: "person",
    entityId: user.id,
    detail: user.identitySource,
  });
  if (user.identitySource !== "saml" || !user.nameId) return redirect("/sign-in?signedOut=app", { headers });
  if (!(await identityProviderStatus()).answering) return redirect("/sign-in?signedOut=partial", { headers });
  try {
    const setup = samlSetup();
    const location = await setup.logout.getLogoutUrlAsync(
      {
        issuer: setup.idpIssuer,
        nameID: user.nameId,
        nameIDFormat: NAME_ID_FORMAT,
        sessionIndex: user.sessionIndex,
      },
      "signed-out",
      {},
    );
    return redirect(location, { headers });
  } catch {
    return redirect("/sign-in?signedOut=partial", { headers });
  }
}

/** Ends every Plumbline session that came from this identity-provider session; returns whose they were. */
async function endSessionsOf(nameId: string, sessionIndex: string | undefined): Promise<string[]> {
  const rows = await db
    .delete(t.sessions)
    .where(
      sessionIndex
        ? sql`json_extract(${t.sessions.dataJson}, '$.nameId') = ${nameId} and json_extract(${t.sessions.dataJson}, '$.sessionIndex') = ${sessionIndex}`
        : sql`json_extract(${t.sessions.dataJson}, '$.nameId') = ${nameId}`,
    )
    .returning({ personId: t.sessions.personId });
  return [...new Set(rows.map((r) => r.personId).filter((id): id is string => id !== null))];
}

/**
 * /auth/saml/logout: the identity provider's answer to our logout request (the visitor is
 * signed out either way; a failed answer only means its own session may still be open), or a
 * logout the identity provider started, which ends the matching Plumbline sessions and answers it.
 */
export async function handleSamlLogout(request: Request): Promise<Response> {
  const url = new URL(request.url);
  let container: Record<string, string> = {};
  if (request.method === "POST") {
    const form = await request.formData();
    container = Object.fromEntries(
      [...form.entries()].filter((e): e is [string, string] => typeof e[1] === "string"),
    );
  } else {
    container = Object.fromEntries(url.searchParams.entries());
  }
  try {
    const { logout } = samlSetup();
    if (container.SAMLRequest) {
      // node-saml accepts an unsigned logout request in the redirect binding; we do not, or
      // anyone could end anyone's sessions with a crafted link.
      if (request.method !== "POST" && !container.Signature) throw new Error("unsigned logout request");
      const result =
        request.method === "POST"
          ? await logout.validatePostRequestAsync(container)
          : await logout.validateRedirectAsync(container, url.search.slice(1));
      if (!result.profile) throw new Error("the logout request named nobody");
      for (const personId of await endSessionsOf(result.profile.nameID, result.profile.sessionIndex)) {
        await appendAudit({
          actor: SYSTEM_ACTOR,
          action: "auth.sign_out",
          entityType: "person",
          entityId: personId,
          detail: "saml: single logout started by the identity provider",
        });
      }
      const answer = await logout.getLogoutResponseUrlAsync(
        result.profile,
        container.RelayState ?? "",
        {},
        true,
      );
      return redirect(answer);
    }
    if (container.SAMLResponse) {
      if (request.method === "POST") await logout.validatePostResponseAsync(container);
      else await logout.validateRedirectAsync(container, url.search.slice(1));
      return redirect("/sign-in?signedOut=idp");
    }
  } catch {
    return redirect("/sign-in?signedOut=partial");
  }
  return redirect("/sign-in?signedOut=partial");
}

/** The sign-in page's data: a refusal message, the identity provider's state, and whether the visitor is signed in. */
export async function signInPage(request: Request): Promise<
  | { signedIn: true }
  | {
      signedIn: false;
      returnTo: string;
      error: { code: RefusalCode; message: string } | null;
      idp: IdpStatus;
      /** app: Plumbline only; idp: Plumbline and the identity provider; partial: the identity provider did not confirm. */
      signedOut: "app" | "idp" | "partial" | null;
    }
> {
  if (await getCurrentUser(request)) return { signedIn: true };
  const url = new URL(request.url);
  const code = url.searchParams.get("error");
  const known: RefusalCode | null = code === null ? null : isRefusalCode(code) ? code : "other";
  const error = known ? { code: known, message: REFUSAL_MESSAGES[known] } : null;
  const signedOut = url.searchParams.get("signedOut");
  return {
    signedIn: false,
    returnTo: safeReturnTo(url.searchParams.get("returnTo")),
    error,
    idp: await identityProviderStatus(),
    signedOut: signedOut === "idp" || signedOut === "partial" ? signedOut : signedOut === null ? null : "app",
  };
}
