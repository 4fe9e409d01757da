/**
 * The database handle and the one way to write: `writeTransaction` (BEGIN IMMEDIATE), so that
 * writers queue behind each other instead of failing, and a hash-chained audit append inside
 * the same transaction as the change it records stays in order.
 */
import { randomUUID } from "node:crypto";
import { db, type Database } from "./client.server";

export { db, dbClient } from "./client.server";
export * as t from "./schema";

export type Transaction = Parameters<Parameters<Database["transaction"]>[0]>[0];
export type DbOrTx = Database | Transaction;

let writeQueue: Promise<unknown> = Promise.resolve();

/**
 * Runs every write of this process one at a time. SQLite statements run synchronously on the
 * event loop, so a second in-process connection waiting for the write lock would block the
 * very transaction holding it until the busy timeout fails the wait. Queued here, writers
 * wait asynchronously; the busy timeout then only covers other processes sharing the file.
 */
function serialised<T>(work: () => Promise<T>): Promise<T> {
  const run = writeQueue.then(work, work);
  writeQueue = run.catch(() => undefined);
  return run;
}

/** A write transaction (BEGIN IMMEDIATE): all of it commits, or none of it. */
export function writeTransaction<T>(work: (tx: Transaction) => Promise<T>): Promise<T> {
  return serialised(() => db.transaction(work, { behavior: "immediate" }));
}

export const newId = (): string => randomUUID();

export const isoNow = (): string => new Date().toISOString();
