/**
 * The audit trail's guarantees, on a real SQLite file: events chain by SHA-256, the database
 * refuses UPDATE and DELETE, concurrent writers keep the chain whole, and verification names
 * the first broken link after an edit made behind the app's back.
 */
import { createHash } from "node:crypto";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const audit = await import("~/.server/audit.server");
const { dbClient } = await import("~/.server/db/index.server");

const actor = { id: "p1", name: "Test Person" };

beforeAll(async () => {
  for (let i = 0; i < 5; i++) {
    await audit.appendAudit({
      actor,
      action: "test.step",
      entityType: "thing",
      entityId: `t${i}`,
      before: { n: i },
      after: { n: i + 1 },
    });
  }
});

describe("audit chain", () => {
  it("writes canonical JSON with sorted keys", () => {
    expect(audit.canonicalJson({ b: 1, a: { d: [2, { z: 1, y: 2 }], c: null } })).toBe(
      '{"a":{"c":null,"d":[2,{"y":2,"z":1}]},"b":1}',
    );
  });

  it("links each event to the previous one by SHA-256 of the previous hash and its own content", async () => {
    const rs = await dbClient.execute("SELECT * FROM audit_events ORDER BY seq");
    expect(rs.rows[0].prev_hash).toBe(audit.GENESIS_HASH);
    for (let i = 1; i < rs.rows.length; i++) expect(rs.rows[i].prev_hash).toBe(rs.rows[i - 1].hash);
    // Recompute one hash independently of the module, from the documented recipe.
    const e = rs.rows[2];
    const content = audit.canonicalJson({
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
    expect(createHash("sha256").update(`${e.prev_hash}\n${content}`).digest("hex")).toBe(e.hash);
  });

  it("is refused UPDATE and DELETE by the database itself", async () => {
    await expect(dbClient.execute("UPDATE audit_events SET detail = 'x' WHERE seq = 1")).rejects.toThrow(
      /append-only/,
    );
    await expect(dbClient.execute("DELETE FROM audit_events WHERE seq = 1")).rejects.toThrow(/append-only/);
  });

  it("stays whole under concurrent writers", async () => {
    await Promise.all(
      Array.from({ length: 40 }, (_, i) =>
        audit.appendAudit({ actor, action: "test.concurrent", entityType: "thing", entityId: `c${i}` }),
      ),
    );
    expect(await audit.verifyAuditChain()).toMatchObject({ intact: true, events: 45, head: { seq: 45 } });
  });

  it("names the first broken link after an edit behind the app's back", async () => {
    await dbClient.execute("DROP TRIGGER audit_events_no_update");
    await dbClient.execute("UPDATE audit_events SET detail = 'rewritten' WHERE seq = 3");
    const verdict = await audit.verifyAuditChain();
    expect(verdict).toMatchObject({
      intact: false,
      brokenAtSeq: 3,
      reason: "its content no longer matches its hash",
    });
  });

  it("names a removed event", async () => {
    await dbClient.execute("UPDATE audit_events SET detail = NULL WHERE seq = 3");
    expect((await audit.verifyAuditChain()).intact).toBe(true);
    await dbClient.execute("DROP TRIGGER audit_events_no_delete");
    await dbClient.execute("DELETE FROM audit_events WHERE seq = 10");
    expect(await audit.verifyAuditChain()).toMatchObject({
      intact: false,
      brokenAtSeq: 10,
      reason: "event 10 is missing",
    });
  });
});
