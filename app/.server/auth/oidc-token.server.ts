/**
 * Verifying a sponsor's OpenID Connect ID token (OpenID Connect Core 1.0, section 3.1.3.7):
 * the signature against the provider's published keys (JWKS, asymmetric algorithms only), the
 * issuer exactly as discovered, our client id in the audience (and as `azp` when there are
 * several audiences), the expiry and issue time with a small clock allowance, and the nonce
 * that binds the token to the sign-in this browser started. Every failure is a SignInRefused.
 */
import { createHmac, timingSafeEqual } from "node:crypto";
import { errors, jwtVerify, type JWTPayload, type JWTVerifyGetKey } from "jose";
import type { VerifiedIdentity } from "../people.server";
import { SignInRefused } from "./refusal.server";

/** Signature algorithms accepted for ID tokens: asymmetric only (never `none` or HMAC with a shared secret). */
export const ID_TOKEN_ALGORITHMS = [
  "RS256",
  "RS384",
  "RS512",
  "PS256",
  "PS384",
  "PS512",
  "ES256",
  "ES384",
  "ES512",
  "EdDSA",
];
/** Allowed clock difference with the provider, in seconds. */
export const CLOCK_TOLERANCE_S = 5;
/** An ID token issued longer ago than this is refused even if it has not expired. */
export const MAX_TOKEN_AGE_S = 10 * 60;

export interface IdTokenCheck {
  issuer: string;
  clientId: string;
  keys: JWTVerifyGetKey;
  /** The nonce this sign-in sent in its authorization request. */
  nonce: string;
}

/**
 * The nonce for one authorization request, derived from its state with a keyed hash, so the
 * callback can recompute it from the state the strategy has already matched to this browser's
 * cookie: a token minted for another sign-in carries another nonce and is refused.
 */
export function nonceFor(state: string, secret: string): string {
  return createHmac("sha256", secret).update(`plumbline-oidc-nonce\0${state}`).digest("base64url");
}

function sameText(a: string, b: string): boolean {
  const x = Buffer.from(a);
  const y = Buffer.from(b);
  return x.length === y.length && timingSafeEqual(x, y);
}

function claimedEmail(token: string): string | null {
  try {
    const body = JSON.parse(Buffer.from(token.split(".")[1] ?? "", "base64url").toString("utf8")) as {
      email?: unknown;
    };
    return typeof body.email === "string" ? body.email.slice(0, 200) : null;
  } catch {
    return null;
  }
}

export async function verifyIdToken(idToken: string, check: IdTokenCheck): Promise<JWTPayload> {
  const who = claimedEmail(idToken);
  const refuse = (code: ConstructorParameters<typeof SignInRefused>[0], reason: string) =>
    new SignInRefused(code, `ID token: ${reason}`, who);
  let payload: JWTPayload;
  try {
    ({ payload } = await jwtVerify(idToken, check.keys, {
      issuer: check.issuer,
      audience: check.clientId,
      algorithms: ID_TOKEN_ALGORITHMS,
      clockTolerance: CLOCK_TOLERANCE_S,
      maxTokenAge: MAX_TOKEN_AGE_S,
      requiredClaims: ["iss", "sub", "aud", "exp", "iat", "nonce"],
    }));
  } catch (error) {
    const message = error instanceof Error ? error.message : String(error);
    if (error instanceof errors.JWKSNoMatchingKey)
      throw refuse("foreign-signed", `no key of the provider's JWKS matches (${message})`);
    if (error instanceof errors.JWSSignatureVerificationFailed) throw refuse("tampered", message);
    if (error instanceof errors.JOSEAlgNotAllowed)
      throw refuse("tampered", `signature algorithm not accepted (${message})`);
    if (error instanceof errors.JWTExpired) throw refuse("expired", message);
    if (error instanceof errors.JWTClaimValidationFailed) {
      if (error.claim === "iss") throw refuse("wrong-issuer", message);
      if (error.claim === "aud") throw refuse("wrong-audience", message);
      if (error.claim === "nonce") throw refuse("replayed", message);
      if (error.claim === "iat" || error.claim === "nbf") throw refuse("expired", message);
    }
    throw refuse("tampered", message);
  }
  const audiences = Array.isArray(payload.aud) ? payload.aud : [payload.aud];
  if (audiences.length > 1 && payload.azp !== check.clientId)
    throw refuse("wrong-audience", "several audiences and the authorized party is not Plumbline");
  if (typeof payload.nonce !== "string" || !sameText(payload.nonce, check.nonce)) {
    throw refuse("replayed", "the nonce does not match the sign-in this browser started");
  }
  return payload;
}

const text = (v: unknown): string | null => (typeof v === "string" && v.trim().length > 0 ? v.trim() : null);

/** The sponsor reader the verified claims describe. Never an administrator, whatever the token says. */
export function identityFromClaims(claims: JWTPayload): VerifiedIdentity {
  const email = text(claims.email);
  if (!email || !claims.sub)
    throw new SignInRefused("incomplete", "the ID token carried no e-mail address or subject");
  if (claims.email_verified === false)
    throw new SignInRefused("incomplete", "the provider says the e-mail address is not verified", email);
  const organisation = text(claims.organisation);
  if (!organisation)
    throw new SignInRefused("no-organisation", "the ID token carried no organisation claim", email);
  if (!claims.iss) throw new SignInRefused("incomplete", "the ID token carried no issuer", email);
  return {
    source: "oidc",
    externalId: claims.sub,
    issuer: claims.iss,
    email,
    displayName: text(claims.name) ?? email,
    organisation,
    isAdmin: false,
  };
}
