/**
 * The audit trail: every change of state appends one event. Events are hash-chained: each
 * stores the previous event's hash and its own hash = SHA-256(prevHash + "\n" + canonical
 * content), so any edit, insertion or removal behind the app's back breaks the chain at the
 * first altered event. The database refuses UPDATE and DELETE on the table (triggers in the
 * migrations), so the app itself cannot rewrite history either.
 *
 * Someone with write access to the database file could drop the triggers, edit an event and
 * recompute the plain hashes. So each event also carries a keyed hash, mac = HMAC-SHA256(audit
 * key, previous mac + "\n" + seq + "\n" + hash), with the key outside the database
 * (audit-key.server.ts): without the key the chain cannot be recomputed. Verification checks
 * both and names the first link that fails either. The head (last seq, time and mac) is shown on
 * the audit page so that it can be recorded elsewhere: a trail cut short after that point, or
 * rewritten by someone holding the key, no longer ends at the recorded head.
 *
 * Trails from before keyed hashes: when Plumbline creates a new audit key (no AUDIT_KEY and no
 * key file yet) it gives every event still without one its keyed hash, after checking that the
 * plain chain holds; from then on an event without a keyed hash is a broken link. A key supplied
 * by the operator never keys unkeyed events, so removing the keyed hashes cannot launder an edit.
 */
import { createHash, createHmac, timingSafeEqual } from "node:crypto";
import { and, asc, count, desc, eq, gte, isNull, like, lte, type SQL } from "drizzle-orm";
import { loadAuditKey } from "./audit-key.server";
import { canonicalJson } from "./canonical-json";
import { db, isoNow, t, writeTransaction, type DbOrTx } from "./db/index.server";

export const GENESIS_HASH = "0".repeat(64);

export interface Actor {
  id: string | null;
  name: string;
}

export const SYSTEM_ACTOR: Actor = { id: null, name: "Plumbline (system)" };

export interface AuditInput {
  actor: Actor;
  /** Dotted verb, e.g. `auth.sign_in`, `membership.grant`, `dataset.lock`. */
  action: string;
  entityType: string;
  entityId?: string | null;
  studyId?: string | null;
  before?: unknown;
  after?: unknown;
  detail?: string | null;
}

export { canonicalJson };

type StoredEvent = typeof t.auditEvents.$inferSelect;

export function eventMac(key: Buffer, prevMac: string, seq: number, hash: string): string {
  return createHmac("sha256", key).update(`${prevMac}\n${seq}\n${hash}`).digest("hex");
}

const sameHex = (a: string | null, b: string) =>
  a !== null && a.length === b.length && timingSafeEqual(Buffer.from(a), Buffer.from(b));

/** The fields an event's hash covers: everything but its own hash. */
function hashedContent(e: Omit<StoredEvent, "hash" | "mac">): string {
  return canonicalJson({
    seq: e.seq,
    at: e.at,
    actorId: e.actorId,
    actorName: e.actorName,
    action: e.action,
    entityType: e.entityType,
    entityId: e.entityId,
    studyId: e.studyId,
    beforeJson: e.beforeJson,
    afterJson: e.afterJson,
    detail: e.detail,
  });
}

export function eventHash(prevHash: string, e: Omit<StoredEvent, "hash" | "prevHash" | "mac">): string {
  return createHash("sha256")
    .update(`${prevHash}\n${hashedContent({ ...e, prevHash })}`)
    .digest("hex");
}

async function appendWithin(tx: DbOrTx, input: AuditInput): Promise<StoredEvent> {
  const [last] = await tx
    .select({ seq: t.auditEvents.seq, hash: t.auditEvents.hash, mac: t.auditEvents.mac })
    .from(t.auditEvents)
    .orderBy(desc(t.auditEvents.seq))
    .limit(1);
  const draft = {
    seq: (last?.seq ?? 0) + 1,
    at: isoNow(),
    actorId: input.actor.id,
    actorName: input.actor.name,
    action: input.action,
    entityType: input.entityType,
    entityId: input.entityId ?? null,
    studyId: input.studyId ?? null,
    beforeJson: input.before === undefined ? null : canonicalJson(input.before),
    afterJson: input.after === undefined ? null : canonicalJson(input.after),
    detail: input.detail ?? null,
  };
  const prevHash = last?.hash ?? GENESIS_HASH;
  const hash = eventHash(prevHash, draft);
  // after an event without a keyed hash the chain is broken anyway: keep keying from the stored value
  const event: StoredEvent = {
    ...draft,
    prevHash,
    hash,
    mac: eventMac(auditKey.key, last ? (last.mac ?? "") : GENESIS_HASH, draft.seq, hash),
  };
  await tx.insert(t.auditEvents).values(event);
  return event;
}

/**
 * Appends one event. Pass the transaction of the change being recorded so both commit or
 * neither does; without one, the event is written in its own write transaction.
 */
export function appendAudit(input: AuditInput, tx?: DbOrTx): Promise<StoredEvent> {
  return tx ? appendWithin(tx, input) : writeTransaction((own) => appendWithin(own, input));
}

export interface ChainHead {
  seq: number;
  at: string;
  /** The last event's keyed hash: record it elsewhere with its time to notice a trail cut short or rewritten later. */
  mac: string | null;
}

export type ChainVerdict =
  | { intact: true; events: number; head: ChainHead | null }
  | { intact: false; events: number; brokenAtSeq: number; reason: string; head: ChainHead | null };

/** The last event of the trail. */
export async function auditHead(): Promise<ChainHead | null> {
  const [last] = await db
    .select({ seq: t.auditEvents.seq, at: t.auditEvents.at, mac: t.auditEvents.mac })
    .from(t.auditEvents)
    .orderBy(desc(t.auditEvents.seq))
    .limit(1);
  return last ?? null;
}

/** Walks the whole chain in order and names the first event whose link does not hold, by its plain hash or its keyed hash. */
export async function verifyAuditChain(): Promise<ChainVerdict> {
  const head = await auditHead();
  const found = await walkChain(auditKey.key);
  return { ...found, head } as ChainVerdict;
}

async function walkChain(
  key: Buffer,
): Promise<
  { intact: true; events: number } | { intact: false; events: number; brokenAtSeq: number; reason: string }
> {
  const pageSize = 5000;
  let prevHash = GENESIS_HASH;
  let prevMac = GENESIS_HASH;
  let expectedSeq = 1;
  let count = 0;
  for (;;) {
    const page = await db
      .select()
      .from(t.auditEvents)
      .where(gte(t.auditEvents.seq, expectedSeq))
      .orderBy(asc(t.auditEvents.seq))
      .limit(pageSize);
    for (const e of page) {
      count++;
      if (e.seq !== expectedSeq) {
        return {
          intact: false,
          events: count,
          brokenAtSeq: expectedSeq,
          reason: `event ${expectedSeq} is missing`,
        };
      }
      if (e.prevHash !== prevHash) {
        return {
          intact: false,
          events: count,
          brokenAtSeq: e.seq,
          reason: "it does not point at the previous event's hash",
        };
      }
      const { hash, prevHash: _stored, ...rest } = e;
      const { mac: _mac, ...content } = rest;
      if (eventHash(prevHash, content) !== hash) {
        return {
          intact: false,
          events: count,
          brokenAtSeq: e.seq,
          reason: "its content no longer matches its hash",
        };
      }
      if (e.mac === null) {
        return {
          intact: false,
          events: count,
          brokenAtSeq: e.seq,
          reason: "it carries no keyed hash (HMAC), so it was added or rewritten outside Plumbline",
        };
      }
      if (!sameHex(e.mac, eventMac(key, prevMac, e.seq, hash))) {
        return {
          intact: false,
          events: count,
          brokenAtSeq: e.seq,
          reason:
            "its keyed hash (HMAC) does not match: it was changed and re-hashed without the audit key, or the audit key is not the one the trail was kept with",
        };
      }
      prevHash = hash;
      prevMac = e.mac;
      expectedSeq++;
    }
    if (page.length < pageSize) return { intact: true, events: count };
  }
}

/**
 * A new audit key keys the trail from its start: every event still without a keyed hash gets
 * one, in order, provided the plain chain holds up to it. Runs only when this process created
 * the key (see the top of this file).
 */
async function keyUnkeyedEvents(key: Buffer): Promise<void> {
  await writeTransaction(async (tx) => {
    const unkeyed = await tx
      .select({ seq: t.auditEvents.seq })
      .from(t.auditEvents)
      .where(isNull(t.auditEvents.mac))
      .limit(1);
    if (unkeyed.length === 0) return;
    const events = await tx.select().from(t.auditEvents).orderBy(asc(t.auditEvents.seq));
    let prevHash = GENESIS_HASH;
    let prevMac = GENESIS_HASH;
    for (const [i, e] of events.entries()) {
      const { hash, prevHash: stored, mac, ...content } = e;
      // a broken plain link stays broken: nothing from there on is vouched for with the key
      if (e.seq !== i + 1 || stored !== prevHash || eventHash(prevHash, content) !== hash) return;
      const expected = eventMac(key, prevMac, e.seq, hash);
      if (mac === null)
        await tx.update(t.auditEvents).set({ mac: expected }).where(eq(t.auditEvents.seq, e.seq));
      else if (mac !== expected) return;
      prevHash = hash;
      prevMac = expected;
    }
  });
}

const auditKey = loadAuditKey();
if (auditKey.created) await keyUnkeyedEvents(auditKey.key);

/** Where the audit key comes from, for the audit page. */
export const auditKeySource = auditKey.source;

export interface AuditFilter {
  studyId?: string;
  action?: string;
  actor?: string;
  from?: string;
  to?: string;
  limit?: number;
  /** Events to skip (newest first), for paging. */
  offset?: number;
}

function whereOf(filter: Omit<AuditFilter, "limit" | "offset">): SQL | undefined {
  const where: SQL[] = [];
  if (filter.studyId) where.push(eq(t.auditEvents.studyId, filter.studyId));
  if (filter.action) where.push(like(t.auditEvents.action, `${filter.action}%`));
  if (filter.actor) where.push(like(t.auditEvents.actorName, `%${filter.actor}%`));
  if (filter.from) where.push(gte(t.auditEvents.at, filter.from));
  if (filter.to) where.push(lte(t.auditEvents.at, `${filter.to}\uffff`));
  return where.length ? and(...where) : undefined;
}

/** Newest first, with optional filters (action prefix, actor name fragment, date range); `limit` null for every match. */
export async function listAuditEvents(
  filter: Omit<AuditFilter, "limit"> & { limit?: number | null } = {},
): Promise<StoredEvent[]> {
  const query = db.select().from(t.auditEvents).where(whereOf(filter)).orderBy(desc(t.auditEvents.seq));
  if (filter.limit === null) return query;
  return query.limit(filter.limit ?? 200).offset(filter.offset ?? 0);
}

/** How many events match the filters (for paging). */
export async function countAuditEvents(filter: AuditFilter = {}): Promise<number> {
  const [row] = await db.select({ n: count() }).from(t.auditEvents).where(whereOf(filter));
  return row?.n ?? 0;
}
