/**
 * Why a sign-in response (SAML, or a sponsor's OpenID Connect ID token) was refused, in words a person can act on. The codes travel in
 * the sign-in page's address (`/sign-in?error=CODE`); the reason goes to the audit trail.
 */
export const REFUSAL_MESSAGES = {
  tampered:
    "The sign-in response was changed after the identity provider signed it, so Plumbline refused it. Sign in again; if this keeps happening, tell your administrator.",
  "foreign-signed":
    "The sign-in response was signed with a key Plumbline does not trust: it did not come from your organisation's identity provider. Sign in again from this page; if this keeps happening, tell your administrator.",
  replayed:
    "That sign-in response was already used, or it does not answer a sign-in started here, so Plumbline refused it. Start again with the button below.",
  "not-this-browser":
    "That sign-in response answers a sign-in that was not started in this browser, or it took longer than fifteen minutes, so Plumbline refused it: a sign-in started elsewhere could sign you in as someone else. Start again with the button below.",
  expired:
    "The sign-in response is outside its validity period: it expired, or the clocks of the sign-in service and Plumbline disagree. Sign in again; if it keeps happening, tell your administrator about the clock difference.",
  "wrong-audience":
    "The sign-in response was addressed to a different application, not to this Plumbline, so it was refused. Tell your administrator: the identity provider's settings for Plumbline need checking.",
  "wrong-issuer":
    "The sign-in response came from an identity provider Plumbline is not set up to trust, so it was refused. Sign in again from this page; if this keeps happening, tell your administrator.",
  incomplete:
    "The identity provider did not send your e-mail address, which Plumbline needs to know who you are. Tell your administrator to release the e-mail attribute to Plumbline.",
  "staff-account":
    "That e-mail address belongs to a staff account, which signs in with single sign-on, not with sponsor sign-in. Use “Sign in with single sign-on”, or ask your administrator.",
  "subject-mismatch":
    "That e-mail address already belongs to a Plumbline account that signs in as another person at your organisation's sign-in service (or at another organisation's), so Plumbline refused the sign-in to keep that account safe. Ask your administrator to check the account.",
  "no-organisation":
    "Your organisation's sign-in service did not say which organisation you belong to, and Plumbline needs it to show you the studies shared with your organisation. Tell your organisation's administrator to release the organisation claim to Plumbline.",
  unavailable:
    "The sign-in service is not answering, so single sign-on could not start. Try again shortly or tell your administrator.",
  misconfigured:
    "Single sign-on is not set up correctly on this Plumbline, so sign-in cannot start. Tell your administrator; the server log names the setting to fix.",
  other:
    "Single sign-on did not complete. Try again; if it keeps failing, tell your administrator the time it happened.",
} as const;

export type RefusalCode = keyof typeof REFUSAL_MESSAGES;

export const isRefusalCode = (value: string | null): value is RefusalCode =>
  value !== null && Object.prototype.hasOwnProperty.call(REFUSAL_MESSAGES, value);

/** A refused sign-in: `code` for the person, `reason` (the technical cause) for the audit trail. */
export class SignInRefused extends Error {
  constructor(
    readonly code: RefusalCode,
    readonly reason: string,
    /** Who the response claimed to be, when it said so (unverified unless the signature held). */
    readonly claimedEmail: string | null = null,
    readonly requestId: string | null = null,
  ) {
    super(`${code}: ${reason}`);
    this.name = "SignInRefused";
  }
}

/** Sorts node-saml's error messages into our refusal codes (signature failures are sorted later). */
export function codeForValidationError(message: string): RefusalCode | "signature" {
  if (/signature/i.test(message)) return "signature";
  if (/InResponseTo/i.test(message)) return "replayed";
  if (/expired|not yet valid|subject confirmation/i.test(message)) return "expired";
  if (/audience/i.test(message)) return "wrong-audience";
  if (/issuer/i.test(message)) return "wrong-issuer";
  return "other";
}
