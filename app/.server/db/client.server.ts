import { mkdirSync } from "node:fs";
import path from "node:path";
import { createClient, type Client } from "@libsql/client";
import { drizzle } from "drizzle-orm/libsql";
import { migrate } from "drizzle-orm/libsql/migrator";
import { config } from "../config.server";
import * as schema from "./schema";

export type Database = ReturnType<typeof drizzle<typeof schema>>;

/** A local file database lives at `file:PATH`; anything else is a libSQL server. */
function localFilePath(url: string): string | null {
  if (!url.startsWith("file:")) return null;
  const p = url.slice("file:".length);
  return p === ":memory:" ? null : p;
}

/**
 * Opens the database named by a libSQL URL and applies pending migrations.
 * File databases get WAL mode and a busy timeout so concurrent requests wait for the writer
 * instead of failing with "database is locked".
 */
export async function openDatabase(
  url: string,
  authToken?: string,
): Promise<{ client: Client; db: Database }> {
  const file = localFilePath(url);
  if (file) mkdirSync(path.dirname(path.resolve(file)), { recursive: true });
  // The busy timeout must be a client option so every pooled connection gets it (a PRAGMA
  // would reach only one of them). WAL mode is a property of the file: readers never wait.
  const client = createClient({ url, authToken, timeout: 10_000 });
  if (file) await client.execute("PRAGMA journal_mode = WAL");
  const db = drizzle(client, { schema });
  await migrate(db, { migrationsFolder: path.resolve(config.MIGRATIONS_DIR) });
  return { client, db };
}

const opened = await openDatabase(config.DATABASE_URL, config.DATABASE_AUTH_TOKEN);

/** The app's database handle, migrated and ready. */
export const db: Database = opened.db;
export const dbClient: Client = opened.client;
