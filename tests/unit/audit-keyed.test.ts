/**
 * The audit trail's keyed hashes (HMAC-SHA256 with a key outside the database): someone who can
 * write the SQLite file, drops the append-only trigger, edits an event and recomputes every
 * plain SHA-256 link after it does not get a trail that verifies; verification names the
 * edited event. Removing the keyed hashes does not help either, and a trail kept before keyed
 * hashes is keyed once, when Plumbline creates its audit key. The keyed hash is recomputed here
 * from the documented recipe with Node's HMAC (RFC 2104), independently of the module.
 */
import { createHash, createHmac } from "node:crypto";
import { existsSync, readFileSync, statSync } from "node:fs";
import path from "node:path";
import { createClient, type Client } from "@libsql/client";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { useTempDatabase } from "../support/temp-db";

const { dir, dbFile } = useTempDatabase();
const audit = await import("~/.server/audit.server");

const actor = { id: "p1", name: "Test Person" };
/** Another party's connection straight to the file, as someone with write access to it would open it. */
let file: Client;

type Row = Record<string, unknown>;
const contentOf = (e: Row) =>
  audit.canonicalJson({
    seq: e.seq,
    at: e.at,
    actorId: e.actor_id,
    actorName: e.actor_name,
    action: e.action,
    entityType: e.entity_type,
    entityId: e.entity_id,
    studyId: e.study_id,
    beforeJson: e.before_json,
    afterJson: e.after_json,
    detail: e.detail,
  });
const sha = (prev: string, e: Row) =>
  createHash("sha256")
    .update(`${prev}\n${contentOf(e)}`)
    .digest("hex");

/** Edits one event's detail and recomputes every plain hash from there on, as a forger without the key would. */
async function rewrite(seq: number, detail: string): Promise<void> {
  await file.execute("DROP TRIGGER IF EXISTS audit_events_no_update");
  await file.execute({ sql: "UPDATE audit_events SET detail = ? WHERE seq = ?", args: [detail, seq] });
  const rows = (await file.execute("SELECT * FROM audit_events ORDER BY seq")).rows as unknown as Row[];
  let prev = audit.GENESIS_HASH;
  for (const e of rows) {
    const hash = sha(prev, e);
    await file.execute({
      sql: "UPDATE audit_events SET prev_hash = ?, hash = ? WHERE seq = ?",
      args: [prev, hash, e.seq as number],
    });
    prev = hash;
  }
}

beforeAll(async () => {
  for (let i = 0; i < 8; i++)
    await audit.appendAudit({
      actor,
      action: "test.step",
      entityType: "thing",
      entityId: `t${i}`,
      after: { n: i },
    });
  file = createClient({ url: `file:${dbFile}` });
});
afterAll(() => file.close());

describe("keyed audit chain", () => {
  it("keeps its key in a file of its own under DATA_DIR, readable by its owner only, not in the database", async () => {
    const keyFile = path.join(dir, "data", "keys", "audit-hmac.key");
    expect(existsSync(keyFile)).toBe(true);
    expect(statSync(keyFile).mode & 0o077).toBe(0);
    const key = readFileSync(keyFile, "utf8").trim();
    expect(key).toMatch(/^[0-9a-f]{64}$/);
    const dump = (await file.execute("SELECT * FROM audit_events")).rows
      .map((r) => JSON.stringify(r))
      .join("\n");
    expect(dump).not.toContain(key);
    // each keyed hash is HMAC-SHA256(key, previous mac + "\n" + seq + "\n" + hash), from zeros at the start
    const rows = (await file.execute("SELECT seq, hash, mac FROM audit_events ORDER BY seq")).rows;
    let prev = audit.GENESIS_HASH;
    for (const r of rows) {
      expect(r.mac).toBe(createHmac("sha256", key).update(`${prev}\n${r.seq}\n${r.hash}`).digest("hex"));
      prev = String(r.mac);
    }
    expect(await audit.verifyAuditChain()).toMatchObject({
      intact: true,
      events: 8,
      head: { seq: 8, mac: prev },
    });
  });

  it("does not verify after an edit with every plain hash recomputed, and names the edited event", async () => {
    await rewrite(3, "rewritten by someone with the database file");
    const verdict = await audit.verifyAuditChain();
    expect(verdict).toMatchObject({ intact: false, brokenAtSeq: 3 });
    if (!verdict.intact) expect(verdict.reason).toMatch(/keyed hash \(HMAC\) does not match/);
  });

  it("does not verify when the keyed hashes are removed as well", async () => {
    await file.execute("UPDATE audit_events SET mac = NULL");
    const verdict = await audit.verifyAuditChain();
    expect(verdict).toMatchObject({ intact: false, brokenAtSeq: 1 });
    if (!verdict.intact) expect(verdict.reason).toMatch(/carries no keyed hash/);
  });

  it("a key supplied by the operator never keys unkeyed events; a key Plumbline creates keys a trail from before keyed hashes", async () => {
    // The operator's key: the unkeyed trail stays broken.
    vi.resetModules();
    process.env.AUDIT_KEY = "an-operator-supplied-audit-key-of-enough-length";
    const withOperatorKey = await import("~/.server/audit.server");
    expect(await withOperatorKey.verifyAuditChain()).toMatchObject({ intact: false, brokenAtSeq: 1 });
    // A trail from before keyed hashes (plain chain whole, no keyed hash) and no key yet: Plumbline makes one and keys it.
    delete process.env.AUDIT_KEY;
    process.env.AUDIT_KEY_FILE = path.join(dir, "elsewhere", "new-audit.key");
    vi.resetModules();
    const fresh = await import("~/.server/audit.server");
    expect(existsSync(process.env.AUDIT_KEY_FILE)).toBe(true);
    expect(await fresh.verifyAuditChain()).toMatchObject({ intact: true, events: 8 });
    await fresh.appendAudit({ actor, action: "test.after_keying", entityType: "thing" });
    expect(await fresh.verifyAuditChain()).toMatchObject({ intact: true, events: 9, head: { seq: 9 } });
    delete process.env.AUDIT_KEY_FILE;
  });
});
