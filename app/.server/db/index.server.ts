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

export function writeTransaction<T>(work: (tx: Transaction) => Promise<T>): Promise<T> {
  return db.transaction(work, { behavior: "immediate" });
}

export const newId = (): string => randomUUID();

export const isoNow = (): string => new Date().toISOString();
