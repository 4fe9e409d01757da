/**
 * Outstanding SAML request ids kept in the database (`saml_requests`), so that every app
 * instance sharing the database accepts a response to a request another instance made, and
 * each response is accepted once only. Entries expire after `expiryMs`.
 */
import { AsyncLocalStorage } from "node:async_hooks";
import type { CacheItem, CacheProvider } from "@node-saml/node-saml";
import { and, eq, gt, lt } from "drizzle-orm";
import { db, t, writeTransaction } from "../db/index.server";

/** Per validation: the request ids this validation itself removed from the table. */
const claims = new AsyncLocalStorage<Set<string>>();
/** Per sign-in start: the request ids it saved (so the browser that started it can be bound to them). */
const saves = new AsyncLocalStorage<Set<string>>();

export class DatabaseCacheProvider implements CacheProvider {
  constructor(readonly expiryMs: number) {}

  async saveAsync(key: string, value: string): Promise<CacheItem | null> {
    const now = Date.now();
    const rows = await writeTransaction(async (tx) => {
      await tx.delete(t.samlRequests).where(lt(t.samlRequests.createdAt, now - this.expiryMs));
      return tx
        .insert(t.samlRequests)
        .values({ id: key, value, createdAt: now })
        .onConflictDoNothing()
        .returning();
    });
    if (rows.length) saves.getStore()?.add(key);
    return rows.length ? { value: rows[0].value, createdAt: rows[0].createdAt } : null;
  }

  async getAsync(key: string): Promise<string | null> {
    const [row] = await db
      .select({ value: t.samlRequests.value })
      .from(t.samlRequests)
      .where(and(eq(t.samlRequests.id, key), gt(t.samlRequests.createdAt, Date.now() - this.expiryMs)))
      .limit(1);
    return row?.value ?? null;
  }

  async removeAsync(key: string | null): Promise<string | null> {
    if (!key) return null;
    const rows = await writeTransaction((tx) =>
      tx.delete(t.samlRequests).where(eq(t.samlRequests.id, key)).returning({ value: t.samlRequests.value }),
    );
    if (rows.length) claims.getStore()?.add(key);
    return rows[0]?.value ?? null;
  }
}

/**
 * Runs one response validation and reports which request ids it removed. node-saml reads the
 * id and removes it in separate statements; when two copies of one response arrive at once,
 * both may read it, but only one removes it: that one wins.
 */
export async function withClaims<T>(work: () => Promise<T>): Promise<{ result: T; claimed: Set<string> }> {
  const claimed = new Set<string>();
  const result = await claims.run(claimed, work);
  return { result, claimed };
}

/** Runs the start of a sign-in and reports the request ids it saved (whether it returned or threw). */
export async function withSavedIds<T>(
  work: () => Promise<T>,
): Promise<{ outcome: { value: T } | { thrown: unknown }; saved: Set<string> }> {
  const saved = new Set<string>();
  try {
    return { outcome: { value: await saves.run(saved, work) }, saved };
  } catch (thrown) {
    return { outcome: { thrown }, saved };
  }
}
