/**
 * The audit key: the secret of the audit trail's keyed hashes (HMAC-SHA256, audit.server.ts).
 * It lives outside the database, so that someone able to write the database file cannot
 * recompute the chain after changing it. From AUDIT_KEY, or else from the file AUDIT_KEY_FILE
 * (default DATA_DIR/keys/audit-hmac.key), which is created with a random key, readable by its
 * owner only, when it does not exist yet.
 */
import { randomBytes } from "node:crypto";
import { linkSync, mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import path from "node:path";
import { config } from "./config.server";

export interface AuditKey {
  key: Buffer;
  /** Where it came from, for the audit page ("the environment" or the file's path). */
  source: string;
  /** True when this process made the key just now (the trail is then keyed from its start). */
  created: boolean;
}

const MIN_LENGTH = 32;

function checked(text: string, where: string): Buffer {
  const key = Buffer.from(text.trim(), "utf8");
  if (key.length < MIN_LENGTH)
    throw new Error(
      `The audit key in ${where} has ${key.length} characters; it needs at least ${MIN_LENGTH}. Put a long random value there (for example \`openssl rand -hex 32\`).`,
    );
  return key;
}

export function auditKeyFile(): string {
  return path.resolve(config.AUDIT_KEY_FILE ?? path.join(config.DATA_DIR, "keys", "audit-hmac.key"));
}

export function loadAuditKey(): AuditKey {
  if (config.AUDIT_KEY)
    return {
      key: checked(config.AUDIT_KEY, "AUDIT_KEY"),
      source: "the environment (AUDIT_KEY)",
      created: false,
    };
  const file = auditKeyFile();
  try {
    return { key: checked(readFileSync(file, "utf8"), file), source: file, created: false };
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code !== "ENOENT") throw e;
  }
  mkdirSync(path.dirname(file), { recursive: true, mode: 0o700 });
  const text = randomBytes(32).toString("hex");
  // Written whole to a work file, then linked into place: a link never replaces an existing
  // file, so of two processes starting at once one creates the key and the other reads it.
  const work = `${file}.${process.pid}.${randomBytes(4).toString("hex")}`;
  writeFileSync(work, `${text}\n`, { mode: 0o600 });
  try {
    linkSync(work, file);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === "EEXIST")
      return { key: checked(readFileSync(file, "utf8"), file), source: file, created: false };
    throw e;
  } finally {
    rmSync(work, { force: true });
  }
  return { key: checked(text, file), source: file, created: true };
}
