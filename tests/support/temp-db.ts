/**
 * For unit tests of server modules: points the app's settings at a fresh database file in a
 * temporary folder. Call before importing any app/.server module (the database module opens
 * and migrates the database when it is first imported).
 */
import { mkdtempSync } from "node:fs";
import os from "node:os";
import path from "node:path";

export function useTempDatabase(): { dir: string; dbFile: string } {
  const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-unit-"));
  const dbFile = path.join(dir, "plumbline.db");
  process.env.DATABASE_URL = `file:${dbFile}`;
  process.env.DATA_DIR = path.join(dir, "data");
  process.env.MIGRATIONS_DIR = path.resolve("drizzle");
  // No mail leaves a unit test unless the test starts its own SMTP fake and says where it is.
  process.env.SMTP_PORT ??= "9";
  return { dir, dbFile };
}
