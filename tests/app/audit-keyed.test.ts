/**
 * The running server's audit page: it shows the head of the chain (event, time, keyed hash) so
 * that it can be recorded elsewhere, and someone who writes the SQLite file directly (drops the
 * append-only trigger, edits an event, recomputes every plain SHA-256 link after it) gets a
 * "Chain broken" naming that event, because the keyed hashes (HMAC, key outside the database)
 * cannot be recomputed. The file is put back afterwards.
 */
import { createHash } from "node:crypto";
import { beforeAll, describe, expect, inject, it } from "vitest";
import { sessionCookieFor, testDb } from "../support/sessions";

const stack = inject("stack");
let cookie = "";

beforeAll(async () => {
  cookie = await sessionCookieFor(stack, "morgan.reyes@plumbline.example");
});

const auditPage = async () => {
  const res = await fetch(`${stack.appUrl}/admin/audit`, { headers: { Cookie: cookie } });
  expect(res.status).toBe(200);
  return res.text();
};

type Row = Record<string, string | number | null>;
// The documented recipe (audit.server.ts): JSON with sorted keys of the content, after the previous hash.
const contentOf = (e: Row) =>
  JSON.stringify({
    action: e.action,
    actorId: e.actor_id,
    actorName: e.actor_name,
    afterJson: e.after_json,
    at: e.at,
    beforeJson: e.before_json,
    detail: e.detail,
    entityId: e.entity_id,
    entityType: e.entity_type,
    seq: e.seq,
    studyId: e.study_id,
  });

describe("keyed audit chain on the running server", () => {
  it("shows the head of the chain with its time and keyed hash", async () => {
    const html = await auditPage();
    const last = (
      await testDb(stack).execute("SELECT seq, at, mac FROM audit_events ORDER BY seq DESC LIMIT 1")
    ).rows[0];
    expect(html).toContain("Chain verified");
    expect(html).toContain("Head of the chain");
    expect(String(last.mac)).toMatch(/^[0-9a-f]{64}$/);
    expect(html).toMatch(new RegExp(`data-testid="head-seq"[^>]*>${last.seq}<`));
    expect(html).toMatch(new RegExp(`data-testid="head-at"[^>]*>${last.at}<`));
    expect(html).toMatch(new RegExp(`data-testid="head-mac"[^>]*>${last.mac}<`));
  });

  it("names the edited event after a rewrite with every plain hash recomputed", async () => {
    const db = testDb(stack);
    const trigger = String(
      (
        await db.execute(
          "SELECT sql FROM sqlite_master WHERE type = 'trigger' AND name = 'audit_events_no_update'",
        )
      ).rows[0]?.sql ?? "",
    );
    expect(trigger).toContain("RAISE(ABORT");
    const original = (await db.execute("SELECT * FROM audit_events ORDER BY seq")).rows as unknown as Row[];
    const target = 4;
    await db.execute("DROP TRIGGER audit_events_no_update");
    try {
      let prev = "0".repeat(64);
      for (const e of original) {
        const edited =
          e.seq === target ? { ...e, detail: "rewritten with write access to the database file" } : e;
        const hash = createHash("sha256")
          .update(`${prev}\n${contentOf(edited)}`)
          .digest("hex");
        await db.execute({
          sql: "UPDATE audit_events SET detail = ?, prev_hash = ?, hash = ? WHERE seq = ?",
          args: [edited.detail, prev, hash, e.seq],
        });
        prev = hash;
      }
      const html = await auditPage();
      expect(html).toContain("Chain broken");
      expect(html).toMatch(
        new RegExp(
          `first broken link is event <span[^>]*>${target}</span>:(?:\\s|<!-- -->)*its keyed hash \\(HMAC\\) does not match`,
        ),
      );
    } finally {
      for (const e of original)
        await db.execute({
          sql: "UPDATE audit_events SET detail = ?, prev_hash = ?, hash = ? WHERE seq = ?",
          args: [e.detail, e.prev_hash, e.hash, e.seq],
        });
      await db.execute(trigger);
    }
    expect(await auditPage()).toContain("Chain verified");
  });
});
