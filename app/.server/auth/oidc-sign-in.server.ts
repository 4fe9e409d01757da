/**
 * Sponsor sign-in through the sponsor organisation's OpenID Connect provider, as the route
 * modules use it: remix-auth-oauth2 runs the authorization-code flow with PKCE (S256) and a
 * state kept in a short-lived cookie; we add the nonce and verify the ID token ourselves
 * (oidc-token.server.ts), because the strategy only exchanges the code. The person is created
 * or refreshed from the verified claims (never an administrator), gets the sponsor reader role
 * on the studies shared with their organisation, and starts a Plumbline session.
 */
import { createRemoteJWKSet, type JWTPayload, type JWTVerifyGetKey } from "jose";
import { eq } from "drizzle-orm";
import { redirect } from "react-router";
import { Authenticator } from "remix-auth";
import { OAuth2RequestError, OAuth2Strategy } from "remix-auth-oauth2";
import { config, servedOverHttps } from "../config.server";
import { db, t } from "../db/index.server";
import { recordSignIn, type Person } from "../people.server";
import { safeReturnTo, startSession } from "../session.server";
import { syncSponsorMemberships } from "../sponsor-access.server";
import { refuseSignIn } from "./sign-in.server";
import { identityFromClaims, nonceFor, verifyIdToken } from "./oidc-token.server";
import { SignInRefused } from "./refusal.server";

const STATE_COOKIE = "plumbline_oidc";
/** Not prefixed like the state cookies: remix-auth-oauth2 reads every cookie whose name starts with theirs. */
const RETURN_COOKIE = "plumbline_return_after_oidc";
const COOKIE_PATH = "/auth/oidc";

interface Discovery {
  issuer: string;
  authorizationEndpoint: string;
  tokenEndpoint: string;
  keys: JWTVerifyGetKey;
}

/** The provider could not be reached or described itself wrongly; `code` says which. */
class ProviderProblem extends Error {
  constructor(
    readonly code: "unavailable" | "misconfigured",
    message: string,
  ) {
    super(message);
  }
}

let discovered: Promise<Discovery> | null = null;

const trimSlash = (s: string): string => s.replace(/\/+$/, "");

async function discover(): Promise<Discovery> {
  const url = `${trimSlash(config.OIDC_ISSUER)}/.well-known/openid-configuration`;
  let doc: Record<string, unknown>;
  try {
    const res = await fetch(url, {
      headers: { Accept: "application/json" },
      signal: AbortSignal.timeout(3000),
    });
    if (!res.ok) throw new Error(`HTTP ${res.status}`);
    doc = (await res.json()) as Record<string, unknown>;
  } catch (error) {
    throw new ProviderProblem(
      "unavailable",
      `sponsor sign-in: the provider's discovery document at ${url} did not answer (${(error as Error).message})`,
    );
  }
  const issuer = doc.issuer;
  const endpoints = [doc.authorization_endpoint, doc.token_endpoint, doc.jwks_uri];
  // OpenID Connect Discovery 1.0, section 4.3: the issuer in the document must be the one we asked.
  if (
    typeof issuer !== "string" ||
    trimSlash(issuer) !== trimSlash(config.OIDC_ISSUER) ||
    !endpoints.every((e) => typeof e === "string")
  ) {
    throw new ProviderProblem(
      "misconfigured",
      `sponsor sign-in: the discovery document at ${url} names issuer ${String(issuer)} or lacks its endpoints; set OIDC_ISSUER to the provider's issuer exactly`,
    );
  }
  return {
    issuer,
    authorizationEndpoint: doc.authorization_endpoint as string,
    tokenEndpoint: doc.token_endpoint as string,
    keys: createRemoteJWKSet(new URL(doc.jwks_uri as string)),
  };
}

/** The provider's metadata, fetched on first use and kept (a failure is not kept: the next sign-in asks again). */
function discovery(): Promise<Discovery> {
  discovered ??= discover().catch((error: unknown) => {
    discovered = null;
    throw error;
  });
  return discovered;
}

/** remix-auth-oauth2's strategy with the OpenID Connect nonce added to the authorization request. */
class OidcStrategy extends OAuth2Strategy<JWTPayload> {
  override name = "oidc";
  protected override authorizationParams(params: URLSearchParams): URLSearchParams {
    const next = new URLSearchParams(params);
    next.set("nonce", nonceFor(params.get("state") ?? "", config.SESSION_SECRET));
    return next;
  }
}

let authenticator: { for: Discovery; auth: Authenticator<JWTPayload> } | null = null;

async function auth(): Promise<Authenticator<JWTPayload>> {
  const d = await discovery();
  if (authenticator?.for === d) return authenticator.auth;
  const strategy = new OidcStrategy(
    {
      cookie: {
        name: STATE_COOKIE,
        path: COOKIE_PATH,
        sameSite: "Lax",
        maxAge: 600,
        ...(servedOverHttps ? { secure: true as const } : {}),
      },
      clientId: config.OIDC_CLIENT_ID,
      clientSecret: config.OIDC_CLIENT_SECRET,
      authorizationEndpoint: d.authorizationEndpoint,
      tokenEndpoint: d.tokenEndpoint,
      redirectURI: `${trimSlash(config.APP_URL)}/auth/oidc/callback`,
      scopes: ["openid", "email", "profile"],
    },
    async ({ request, tokens }) => {
      const state = new URL(request.url).searchParams.get("state") ?? "";
      let idToken: string;
      try {
        idToken = tokens.idToken();
      } catch {
        throw new SignInRefused("other", "the token response carried no ID token");
      }
      return verifyIdToken(idToken, {
        issuer: d.issuer,
        clientId: config.OIDC_CLIENT_ID,
        keys: d.keys,
        nonce: nonceFor(state, config.SESSION_SECRET),
      });
    },
  );
  authenticator = { for: d, auth: new Authenticator<JWTPayload>().use(strategy) };
  return authenticator.auth;
}

function cookieAttributes(maxAge: number): string {
  return `Path=${COOKIE_PATH}; HttpOnly; SameSite=Lax; Max-Age=${maxAge}${servedOverHttps ? "; Secure" : ""}`;
}

/** GET /auth/oidc/login: off to the sponsor's provider, or back to sign-in when it is not answering. */
export async function startOidcSignIn(request: Request): Promise<Response> {
  const url = new URL(request.url);
  const returnTo = safeReturnTo(url.searchParams.get("returnTo"));
  try {
    await (
      await auth()
    ).authenticate("oidc", new Request(`${url.origin}${url.pathname}`, { headers: request.headers }));
  } catch (thrown) {
    if (thrown instanceof Response) {
      thrown.headers.append(
        "Set-Cookie",
        `${RETURN_COOKIE}=${encodeURIComponent(returnTo)}; ${cookieAttributes(600)}`,
      );
      return thrown;
    }
    if (thrown instanceof ProviderProblem) {
      console.error(thrown.message);
      return redirect(`/sign-in?error=${thrown.code}`);
    }
    throw thrown;
  }
  throw new Error("The OpenID Connect strategy did not redirect to the provider.");
}

function readCookies(request: Request): Map<string, string> {
  const out = new Map<string, string>();
  for (const part of (request.headers.get("Cookie") ?? "").split(";")) {
    const eq = part.indexOf("=");
    if (eq > 0) out.set(part.slice(0, eq).trim(), part.slice(eq + 1).trim());
  }
  return out;
}

/** Set-Cookie values that end this browser's sign-in state (the state cookies and the return path). */
function clearSignInCookies(request: Request): string[] {
  return [...readCookies(request).keys()]
    .filter((name) => name.startsWith(STATE_COOKIE) || name === RETURN_COOKIE)
    .map((name) => `${name}=; ${cookieAttributes(0)}`);
}

function refusalOf(error: unknown): SignInRefused {
  if (error instanceof SignInRefused) return error;
  if (error instanceof ProviderProblem) return new SignInRefused(error.code, error.message);
  if (error instanceof OAuth2RequestError) {
    if (error.code === "invalid_grant")
      return new SignInRefused("replayed", `token endpoint: ${error.code} ${error.description ?? ""}`.trim());
    if (error.code === "invalid_client")
      return new SignInRefused(
        "misconfigured",
        `token endpoint: invalid_client; check OIDC_CLIENT_ID and OIDC_CLIENT_SECRET`,
      );
    return new SignInRefused("other", `provider answered ${error.code} ${error.description ?? ""}`.trim());
  }
  // remix-auth-oauth2: "Missing state on cookie." / "State in URL doesn't match state in cookie."
  if (error instanceof ReferenceError || error instanceof RangeError)
    return new SignInRefused("replayed", error.message);
  return new SignInRefused("other", error instanceof Error ? error.message : String(error));
}

/** A staff account (SAML) is never taken over by a sponsor provider that asserts the same e-mail. */
async function refuseStaffAccount(email: string): Promise<void> {
  const [existing] = await db
    .select({ source: t.people.identitySource })
    .from(t.people)
    .where(eq(t.people.email, email.trim().toLowerCase()))
    .limit(1);
  if (existing && existing.source !== "oidc") {
    throw new SignInRefused("staff-account", "the e-mail address belongs to a staff (SAML) account", email);
  }
}

/** The person of verified ID-token claims, created or refreshed, with study roles following the study shares. */
export async function recordSponsorSignIn(claims: JWTPayload): Promise<Person> {
  const identity = identityFromClaims(claims);
  await refuseStaffAccount(identity.email);
  const person = await recordSignIn(identity);
  await syncSponsorMemberships(person);
  return person;
}

/**
 * GET /auth/oidc/callback: checks the state against this browser's cookie, exchanges the code
 * (with the PKCE verifier and our client secret), verifies the ID token, records the sign-in,
 * brings the sponsor's study roles in line with the study shares and starts a fresh session.
 */
export async function finishOidcSignIn(request: Request): Promise<Response> {
  const clear = clearSignInCookies(request);
  let person: Person;
  try {
    person = await recordSponsorSignIn(await (await auth()).authenticate("oidc", request));
  } catch (error) {
    if (error instanceof Response) throw error;
    const refusal = refusalOf(error);
    if (refusal.code === "misconfigured" || refusal.code === "unavailable") console.error(refusal.reason);
    const response = await refuseSignIn(refusal);
    for (const c of clear) response.headers.append("Set-Cookie", c);
    return response;
  }
  const returnTo = safeReturnTo(decodeURIComponent(readCookies(request).get(RETURN_COOKIE) ?? "/"));
  const headers = new Headers();
  headers.append("Set-Cookie", await startSession(request, person.id));
  for (const c of clear) headers.append("Set-Cookie", c);
  return redirect(returnTo, { headers });
}
