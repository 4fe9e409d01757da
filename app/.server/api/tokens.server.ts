/**
 * Personal API tokens. A person creates a named token with an expiry on their profile page;
 * it is shown once and only its SHA-256 is stored (with a short prefix to recognise it by).
 * A token acts for its person with that person's study roles, never more, and can be revoked
 * by its person or by an administrator. Creation and revocation are audited.
 */
import { createHash, randomBytes } from "node:crypto";
import { and, desc, eq, gt, isNull, sql } from "drizzle-orm";
import { z } from "zod";
import { appendAudit, type Actor } from "../audit.server";
import { db, isoNow, newId, t, writeTransaction } from "../db/index.server";

export type ApiTokenRow = typeof t.apiTokens.$inferSelect;

/** Every token starts with this, so secret scanners and people can tell what it is. */
export const TOKEN_PREFIX = "plb_";
/** Characters of the token kept for display: the marker and eight random characters. */
const DISPLAY_LENGTH = TOKEN_PREFIX.length + 8;
/** The part of a token people see (the marker and eight characters): failed attempts are counted by it. */
export const tokenPrefixOf = (token: string): string => token.slice(0, DISPLAY_LENGTH);
export const EXPIRY_DAYS = [7, 30, 90] as const;
/** Active tokens one person may hold at once. */
export const MAX_ACTIVE_TOKENS = 10;
/** How stale `lastUsedAt` may get before a request refreshes it (saves a write per request). */
const TOUCH_AFTER_MS = 60 * 1000;

export const NewToken = z.object({
  name: z
    .string()
    .trim()
    .min(2, "Name the token after what will use it, e.g. nightly report pipeline.")
    .max(80, "Keep the name under 80 characters."),
  days: z.coerce
    .number()
    .refine(
      (d): d is (typeof EXPIRY_DAYS)[number] => (EXPIRY_DAYS as readonly number[]).includes(d),
      "Choose an expiry of 7, 30 or 90 days.",
    ),
});
export type NewToken = z.infer<typeof NewToken>;

export function hashToken(token: string): string {
  return createHash("sha256").update(token, "utf8").digest("hex");
}

export type TokenStatus = "active" | "expired" | "revoked";

export function statusOf(row: Pick<ApiTokenRow, "revokedAt" | "expiresAt">, now = Date.now()): TokenStatus {
  if (row.revokedAt) return "revoked";
  return Date.parse(row.expiresAt) <= now ? "expired" : "active";
}

export type CreateTokenResult =
  { ok: true; token: string; row: ApiTokenRow } | { ok: false; message: string };

/** Creates a token for the person; the returned plain token is never stored and cannot be shown again. */
export async function createToken(
  person: Actor & { id: string },
  input: NewToken,
): Promise<CreateTokenResult> {
  const token = `${TOKEN_PREFIX}${randomBytes(32).toString("base64url")}`;
  const at = new Date();
  const row: ApiTokenRow = {
    id: newId(),
    personId: person.id,
    name: input.name,
    tokenHash: hashToken(token),
    prefix: token.slice(0, DISPLAY_LENGTH),
    createdAt: at.toISOString(),
    expiresAt: new Date(at.getTime() + input.days * 24 * 60 * 60 * 1000).toISOString(),
    revokedAt: null,
    lastUsedAt: null,
  };
  return writeTransaction(async (tx): Promise<CreateTokenResult> => {
    const active = await tx
      .select({ id: t.apiTokens.id })
      .from(t.apiTokens)
      .where(
        and(
          eq(t.apiTokens.personId, person.id),
          isNull(t.apiTokens.revokedAt),
          gt(t.apiTokens.expiresAt, row.createdAt),
        ),
      );
    if (active.length >= MAX_ACTIVE_TOKENS) {
      return {
        ok: false,
        message: `You already have ${active.length} active tokens, the most one person may hold. Revoke one you no longer use first.`,
      };
    }
    await tx.insert(t.apiTokens).values(row);
    await appendAudit(
      {
        actor: person,
        action: "token.create",
        entityType: "api_token",
        entityId: row.id,
        after: { name: row.name, prefix: row.prefix, expiresAt: row.expiresAt },
      },
      tx,
    );
    return { ok: true, token, row };
  });
}

/** A person's own tokens, newest first. */
export async function tokensOf(personId: string): Promise<ApiTokenRow[]> {
  return db
    .select()
    .from(t.apiTokens)
    .where(eq(t.apiTokens.personId, personId))
    .orderBy(desc(t.apiTokens.createdAt));
}

export interface TokenListing extends ApiTokenRow {
  ownerName: string;
  ownerEmail: string;
}

/** Every token of every person, newest first, for administrators. */
export async function allTokens(): Promise<TokenListing[]> {
  const rows = await db
    .select({ k: t.apiTokens, name: t.people.displayName, email: t.people.email })
    .from(t.apiTokens)
    .innerJoin(t.people, eq(t.people.id, t.apiTokens.personId))
    .orderBy(desc(t.apiTokens.createdAt));
  return rows.map((r) => ({ ...r.k, ownerName: r.name, ownerEmail: r.email }));
}

export type RevokeResult = { ok: true } | { ok: false; message: string };

/**
 * Revokes a token. `as: "owner"` revokes only the actor's own token; `as: "administrator"`
 * any token (the caller has checked the administrator permission).
 */
export async function revokeToken(
  actor: Actor & { id: string },
  tokenId: string,
  as: "owner" | "administrator",
): Promise<RevokeResult> {
  return writeTransaction(async (tx): Promise<RevokeResult> => {
    const [row] = await tx.select().from(t.apiTokens).where(eq(t.apiTokens.id, tokenId)).limit(1);
    if (!row || (as === "owner" && row.personId !== actor.id))
      return { ok: false, message: "There is no such token among yours." };
    if (row.revokedAt) return { ok: true };
    const at = isoNow();
    await tx.update(t.apiTokens).set({ revokedAt: at }).where(eq(t.apiTokens.id, tokenId));
    await appendAudit(
      {
        actor,
        action: "token.revoke",
        entityType: "api_token",
        entityId: tokenId,
        before: { status: statusOf(row) },
        after: { status: "revoked", revokedAt: at },
        detail:
          as === "owner"
            ? `"${row.name}" (${row.prefix}…) revoked by its owner`
            : `"${row.name}" (${row.prefix}…) revoked by an administrator`,
      },
      tx,
    );
    return { ok: true };
  });
}

/** Who a valid token acts for. */
export interface ApiPrincipal {
  tokenId: string;
  person: { id: string; displayName: string; email: string; organisation: string | null };
}

export type TokenCheck = { ok: true; principal: ApiPrincipal } | { ok: false; message: string };

/** Every API request reads its token: the query is built once (prepared), not per request. */
const tokenByHash = db
  .select({ k: t.apiTokens, p: t.people })
  .from(t.apiTokens)
  .innerJoin(t.people, eq(t.people.id, t.apiTokens.personId))
  .where(eq(t.apiTokens.tokenHash, sql.placeholder("hash")))
  .limit(1)
  .prepare();

/** Checks a presented token: known, not revoked, not expired. Records when it was last used. */
export async function verifyToken(token: string): Promise<TokenCheck> {
  const [row] = await tokenByHash.all({ hash: hashToken(token) });
  if (!row)
    return {
      ok: false,
      message:
        "This API token is not known to Plumbline. Check that it was copied whole, or create a new one on your profile page.",
    };
  const status = statusOf(row.k);
  if (status === "revoked")
    return {
      ok: false,
      message: `This API token ("${row.k.name}") was revoked on ${row.k.revokedAt}. Create a new one on your profile page.`,
    };
  if (status === "expired")
    return {
      ok: false,
      message: `This API token ("${row.k.name}") expired on ${row.k.expiresAt}. Create a new one on your profile page.`,
    };
  if (!row.k.lastUsedAt || Date.now() - Date.parse(row.k.lastUsedAt) > TOUCH_AFTER_MS) {
    await writeTransaction((tx) =>
      tx.update(t.apiTokens).set({ lastUsedAt: isoNow() }).where(eq(t.apiTokens.id, row.k.id)),
    );
  }
  return {
    ok: true,
    principal: {
      tokenId: row.k.id,
      person: {
        id: row.p.id,
        displayName: row.p.displayName,
        email: row.p.email,
        organisation: row.p.organisation,
      },
    },
  };
}
