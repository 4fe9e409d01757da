/**
 * The audit trail: every change of state appends one event. Events are hash-chained: each
 * stores the previous event's hash and its own hash = SHA-256(prevHash + "\n" + canonical
 * content), so any edit, insertion or removal behind the app's back breaks the chain at the
 * first altered event. The database refuses UPDATE and DELETE on the table (triggers in the
 * migrations), so the app itself cannot rewrite history either.
 */
import { createHash } from "node:crypto";
import { and, asc, desc, eq, gte, like, lte, type SQL } from "drizzle-orm";
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

/** JSON with object keys sorted at every depth: the same content always gives the same text. */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) => {
    if (v && typeof v === "object" && !Array.isArray(v)) {
      return Object.fromEntries(Object.entries(v as Record<string, unknown>).sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)));
    }
    return v;
  });
}

type StoredEvent = typeof t.auditEvents.$inferSelect;

/** The fields an event's hash covers: everything but its own hash. */
function hashedContent(e: Omit<StoredEvent, "hash">): string {
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

export function eventHash(prevHash: string, e: Omit<StoredEvent, "hash" | "prevHash">): string {
  return createHash("sha256").update(`${prevHash}\n${hashedContent({ ...e, prevHash })}`).digest("hex");
}

async function appendWithin(tx: DbOrTx, input: AuditInput): Promise<StoredEvent> {
  const [last] = await tx
    .select({ seq: t.auditEvents.seq, hash: t.auditEvents.hash })
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
  const event: StoredEvent = { ...draft, prevHash, hash: eventHash(prevHash, draft) };
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

export type ChainVerdict =
  | { intact: true; events: number }
  | { intact: false; events: number; brokenAtSeq: number; reason: string };

/** Walks the whole chain in order and names the first event whose link does not hold. */
export async function verifyAuditChain(): Promise<ChainVerdict> {
  const pageSize = 5000;
  let prevHash = GENESIS_HASH;
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
        return { intact: false, events: count, brokenAtSeq: expectedSeq, reason: `event ${expectedSeq} is missing` };
      }
      if (e.prevHash !== prevHash) {
        return { intact: false, events: count, brokenAtSeq: e.seq, reason: "it does not point at the previous event's hash" };
      }
      const { hash, prevHash: _stored, ...rest } = e;
      if (eventHash(prevHash, rest) !== hash) {
        return { intact: false, events: count, brokenAtSeq: e.seq, reason: "its content no longer matches its hash" };
      }
      prevHash = hash;
      expectedSeq++;
    }
    if (page.length < pageSize) return { intact: true, events: count };
  }
}

export interface AuditFilter {
  studyId?: string;
  action?: string;
  actor?: string;
  from?: string;
  to?: string;
  limit?: number;
}

/** Newest first, with optional filters (action prefix, actor name fragment, date range). */
export async function listAuditEvents(filter: AuditFilter = {}): Promise<StoredEvent[]> {
  const where: SQL[] = [];
  if (filter.studyId) where.push(eq(t.auditEvents.studyId, filter.studyId));
  if (filter.action) where.push(like(t.auditEvents.action, `${filter.action}%`));
  if (filter.actor) where.push(like(t.auditEvents.actorName, `%${filter.actor}%`));
  if (filter.from) where.push(gte(t.auditEvents.at, filter.from));
  if (filter.to) where.push(lte(t.auditEvents.at, `${filter.to}\uffff`));
  return db
    .select()
    .from(t.auditEvents)
    .where(where.length ? and(...where) : undefined)
    .orderBy(desc(t.auditEvents.seq))
    .limit(filter.limit ?? 200);
}
