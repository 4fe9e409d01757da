/**
 * Signing in and out through the staff identity provider (SAML 2.0), as the route modules use
 * it. remix-auth does not keep the user in a session: after the strategy has verified the
 * response, `finishSamlSignIn` records the sign-in and starts Plumbline's own session.
 */
import type { Profile } from "@node-saml/node-saml";
import { sql } from "drizzle-orm";
import { redirect } from "react-router";
import { Authenticator } from "remix-auth";
import { appendAudit, SYSTEM_ACTOR, type Actor } from "../audit.server";
import { config } from "../config.server";
import { db, t } from "../db/index.server";
import { actorOf, recordSignIn, type Person, type VerifiedIdentity } from "../people.server";
import { endSession, getCurrentUser, safeReturnTo, startSession } from "../session.server";
import { isRefusalCode, REFUSAL_MESSAGES, SignInRefused, type RefusalCode } from "./refusal.server";
import { NAME_ID_FORMAT, SamlSetupError, samlSetup } from "./saml-setup.server";
import { SamlStrategy } from "./saml-strategy.server";

export interface SamlSignIn {
  person: Person;
  nameId: string;
  sessionIndex?: string;
  returnTo: string;
}

/** A single-valued attribute arrives as a string, a multi-valued one as an array (or a string when it has one value). */
function values(profile: Profile, name: string): string[] {
  const raw = (profile.attributes as Record<string, unknown> | undefined)?.[name] ?? profile[name];
  const list = Array.isArray(raw) ? raw : raw === undefined || raw === null ? [] : [raw];
  return list.filter((v): v is string => typeof v === "string").map((v) => v.trim()).filter((v) => v.length > 0);
}

/** The person the verified assertion describes, from its NameID and attributes. */
export function identityFromProfile(profile: Profile, adminGroup: string, idpIssuer: string): VerifiedIdentity {
  const email = values(profile, "email")[0] ?? values(profile, "mail")[0] ?? (profile.nameID?.includes("@") ? profile.nameID : undefined);
  if (!email || !profile.nameID) {
    throw new SignInRefused("incomplete", "the assertion carried no e-mail address or NameID", profile.nameID ?? null);
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
    { saml: setup.signIn, freshSaml: setup.freshSignIn, trustedCert: setup.trustedCert, idpIssuer: setup.idpIssuer },
    async ({ profile, relayState }) => {
      const person = await recordSignIn(identityFromProfile(profile, setup.adminGroup, setup.idpIssuer));
      return { person, nameId: profile.nameID, sessionIndex: profile.sessionIndex, returnTo: safeReturnTo(relayState) };
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
    const res = await fetch(config.SAML_IDP_SSO_URL, { redirect: "manual", signal: AbortSignal.timeout(timeoutMs) });
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
  if (!status.answering) return redirect(`/sign-in?error=unavailable&returnTo=${encodeURIComponent(returnTo)}`);
  const fresh = url.searchParams.get("fresh") === "1" ? "&fresh=1" : "";
  const start = new Request(`${url.origin}${url.pathname}?returnTo=${encodeURIComponent(returnTo)}${fresh}`, { method: "GET" });
  try {
    await auth().authenticate("saml", start);
  } catch (thrown) {
    if (thrown instanceof Response) return thrown;
    if (thrown instanceof SamlSetupError) {
      console.error(thrown.message);
      return redirect("/sign-in?error=misconfigured");
    }
    throw thrown;
  }
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
    if (error instanceof SignInRefused) return refuseSignIn(error);
    if (error instanceof Response) throw error;
    const reason = error instanceof Error ? error.message : String(error);
    if (error instanceof SamlSetupError) console.error(reason);
    return refuseSignIn(new SignInRefused(error instanceof SamlSetupError ? "misconfigured" : "other", reason));
  }
  const cookie = await startSession(request, signIn.person.id, { nameId: signIn.nameId, sessionIndex: signIn.sessionIndex });
  return redirect(signIn.returnTo, { headers: { "Set-Cookie": cookie } });
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
  await appendAudit({ actor: actorOf(user), action: "auth.sign_out", entityType: "person", entityId: user.id, detail: user.identitySource });
  if (user.identitySource !== "saml" || !user.nameId) return redirect("/sign-in?signedOut=app", { headers });
  if (!(await identityProviderStatus()).answering) return redirect("/sign-in?signedOut=partial", { headers });
  try {
    const setup = samlSetup();
    const location = await setup.logout.getLogoutUrlAsync(
      { issuer: setup.idpIssuer, nameID: user.nameId, nameIDFormat: NAME_ID_FORMAT, sessionIndex: user.sessionIndex },
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
    container = Object.fromEntries([...form.entries()].filter((e): e is [string, string] => typeof e[1] === "string"));
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
      const answer = await logout.getLogoutResponseUrlAsync(result.profile, container.RelayState ?? "", {}, true);
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
