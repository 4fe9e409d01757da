/**
 * Electronic signatures: the one rule every signing act follows (signing a rerun, approving a
 * plan version, locking a dataset version), in the spirit of 21 CFR Part 11 (11.50, 11.200):
 * the signer states what the signature means, has authenticated at the identity provider
 * within the last five minutes (otherwise they are sent there again with ForceAuthn, and the
 * identity provider must confirm the same person, see `sign-in.server.ts`), and the name,
 * the time and the meaning are recorded with the act and shown beside it.
 */
import { and, desc, eq } from "drizzle-orm";
import { db, t } from "./db/index.server";
import type { PersonActor } from "./people.server";

/** How recent the signer's authentication at the identity provider must be. */
export const FRESH_SIGN_IN_MS = 5 * 60 * 1000;

/** What each kind of signature means, as the signer reads it before signing and as it is recorded. */
export const SIGNATURE_MEANINGS = {
  rerun: "Reviewed and approved",
  plan: "Approved as the analysis plan to be followed",
  dataset: "Locked as the data to be analysed",
} as const;
export type SignatureKind = keyof typeof SIGNATURE_MEANINGS;

/** A person about to sign, with the time they last authenticated at the identity provider. */
export type Signer = PersonActor & { signedInAt: string };

export type Freshness = { ok: true } | { ok: false; reauthenticate: true; reason: string };

/** Whether the signer's sign-in is fresh enough to sign now. */
export function freshness(signer: { signedInAt: string }, now = Date.now()): Freshness {
  if (now - Date.parse(signer.signedInAt) <= FRESH_SIGN_IN_MS) return { ok: true };
  return {
    ok: false,
    reauthenticate: true,
    reason:
      "Signing needs a fresh sign-in: you last authenticated more than 5 minutes ago. Plumbline sends you to the sign-in service to confirm it is you (as the same person), then brings you back here to finish with one more press.",
  };
}

/** Thrown by a service asked to record a signature without a fresh sign-in. */
export class SignatureRefused extends Error {
  constructor(
    message: string,
    readonly reauthenticate = false,
  ) {
    super(message);
    this.name = "SignatureRefused";
  }
}

/** Checks the rule; the service calls it again inside its own checks, whatever the page did. */
export function requireFreshSignIn(signer: Signer): void {
  const f = freshness(signer);
  if (!f.ok) throw new SignatureRefused(f.reason, true);
}

/** What the audit trail records of a signature (beside the act's own before and after). */
export function signatureEvidence(kind: SignatureKind, signer: Signer, signedAt: string) {
  return {
    meaning: SIGNATURE_MEANINGS[kind],
    signedBy: signer.name,
    signedAt,
    authenticatedAt: signer.signedInAt,
  };
}

export interface RecordedSignature {
  meaning: string;
  signedBy: string;
  signedAt: string;
  authenticatedAt: string;
}

/**
 * The signature recorded with an act (`plan.approve`, `dataset.lock`) in the audit trail, or
 * null for acts recorded before approvals and locks were signatures.
 */
export async function recordedSignature(
  action: "plan.approve" | "dataset.lock",
  entityId: string,
): Promise<RecordedSignature | null> {
  const [row] = await db
    .select({ after: t.auditEvents.afterJson })
    .from(t.auditEvents)
    .where(and(eq(t.auditEvents.action, action), eq(t.auditEvents.entityId, entityId)))
    .orderBy(desc(t.auditEvents.seq))
    .limit(1);
  const signature = row?.after
    ? (JSON.parse(row.after) as { signature?: Partial<RecordedSignature> }).signature
    : undefined;
  if (
    !signature ||
    typeof signature.meaning !== "string" ||
    typeof signature.signedBy !== "string" ||
    typeof signature.signedAt !== "string"
  )
    return null;
  return {
    meaning: signature.meaning,
    signedBy: signature.signedBy,
    signedAt: signature.signedAt,
    authenticatedAt: String(signature.authenticatedAt ?? ""),
  };
}

/**
 * Where to send a signer whose sign-in is not fresh: the identity provider with ForceAuthn,
 * then back to `returnTo` (which should land on the signing form).
 */
export function reauthenticationPath(returnTo: string): string {
  return `/auth/saml/login?fresh=1&returnTo=${encodeURIComponent(returnTo)}`;
}

/** Messages for a signing page reached back from the identity provider (`?reauth=…`). */
const REAUTH_NOTICES = {
  done: "You confirmed your sign-in. Press the button once more to finish your signature.",
  "different-person":
    "The sign-in service confirmed a different person than the one signed in here, so Plumbline refused it and nothing was signed. You are still signed in as before; to sign, confirm your own sign-in.",
} as const;

/** The notice for `?reauth=` on a signing page, if any. */
export function reauthNotice(request: Request): { tone: "within" | "finding"; message: string } | null {
  const value = new URL(request.url).searchParams.get("reauth");
  if (value === "done") return { tone: "within", message: REAUTH_NOTICES.done };
  if (value === "different-person") return { tone: "finding", message: REAUTH_NOTICES["different-person"] };
  return null;
}

/** `returnTo` with `reauth=<outcome>` added to its query (keeping its fragment). */
export function withReauthOutcome(returnTo: string, outcome: keyof typeof REAUTH_NOTICES): string {
  const url = new URL(returnTo, "http://plumbline.invalid");
  url.searchParams.set("reauth", outcome);
  return `${url.pathname}${url.search}${url.hash}`;
}
