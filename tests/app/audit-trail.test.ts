/**
 * The administrator's audit page verifies the chain of the running server's database and
 * names the first broken link when a row is edited behind the app's back. It is paged on the
 * server, and exports the filtered trail as CSV with each event's chain hash and keyed hash;
 * the chain is recomputed here from the CSV alone by the documented recipe (audit.server.ts):
 * SHA-256 of the previous hash, a newline and the sorted-key JSON of the content (Node's crypto,
 * not the app's code).
 */
import { createHash } from "node:crypto";
import { parse } from "csv-parse/sync";
import { beforeAll, describe, expect, inject, it } from "vitest";
import { sessionCookieFor, testDb } from "../support/sessions";

const stack = inject("stack");
let cookie = "";

beforeAll(async () => {
  cookie = await sessionCookieFor(stack, "morgan.reyes@plumbline.example");
});

const auditPage = async (query = "") => {
  const res = await fetch(`${stack.appUrl}/admin/audit${query}`, { headers: { Cookie: cookie } });
  expect(res.status).toBe(200);
  return res.text();
};

describe("audit trail page", () => {
  it("shows the seeded events and a verified chain", async () => {
    const html = await auditPage("?action=membership.");
    expect(html).toContain("Chain verified");
    expect(html).toContain("membership.grant");
  });

  it("filters by action", async () => {
    const html = await auditPage("?action=study.");
    expect(html).toContain("study.create");
    expect(html).not.toContain("membership.grant");
  });

  it("detects an edit made directly in the database, then verifies again once it is undone", async () => {
    const db = testDb(stack);
    const row = (await db.execute("SELECT seq, detail FROM audit_events WHERE seq = 2")).rows[0];
    await db.execute("DROP TRIGGER audit_events_no_update");
    try {
      await db.execute({
        sql: "UPDATE audit_events SET detail = ? WHERE seq = 2",
        args: ["edited behind the app's back"],
      });
      const html = await auditPage();
      expect(html).toContain("Chain broken");
      expect(html).toMatch(/first broken link is event <span[^>]*>2<\/span>/);
    } finally {
      await db.execute({ sql: "UPDATE audit_events SET detail = ? WHERE seq = 2", args: [row.detail] });
      await db.execute(
        "CREATE TRIGGER audit_events_no_update BEFORE UPDATE ON audit_events BEGIN SELECT RAISE(ABORT, 'audit events are append-only: UPDATE is refused'); END",
      );
    }
    expect(await auditPage()).toContain("Chain verified");
  });
});

const rowsOf = (html: string) =>
  [...html.matchAll(/<tr><td class="num text-right">(\d+)<\/td>/g)].map((m) => Number(m[1]));

describe("audit trail paging", () => {
  it("shows one page of the newest events with links to the others, the current page marked", async () => {
    const count = async () =>
      Number((await testDb(stack).execute("SELECT count(*) AS n FROM audit_events")).rows[0].n);
    // more than one page of 50: each export is an audited event of its own
    while ((await count()) <= 60)
      await (
        await fetch(`${stack.appUrl}/admin/audit/export.csv?action=none.`, { headers: { Cookie: cookie } })
      ).text();
    const total = await count();
    const first = await auditPage();
    const seqs = rowsOf(first);
    expect(seqs).toHaveLength(50);
    expect(seqs).toEqual([...seqs].sort((a, b) => b - a));
    expect(first).toMatch(/<nav aria-label="Audit trail pages"/);
    expect(first).toMatch(/<span aria-current="page"[^>]*>1<\/span>/);
    expect(first).toMatch(/<a [^>]*href="\/admin\/audit\?page=2&amp;size=50"[^>]*>Next<\/a>/);
    const second = await auditPage("?page=2&size=50");
    const next = rowsOf(second);
    expect(next[0]).toBe(seqs[49] - 1);
    expect(second).toMatch(/<span aria-current="page"[^>]*>2<\/span>/);
    expect(rowsOf(await auditPage("?size=100"))).toHaveLength(Math.min(100, total));
  });

  it("keeps the filter across pages and treats a page beyond the last as the last", async () => {
    const html = await auditPage("?action=study.&page=999");
    expect(html).toContain("study.create");
    expect(html).not.toContain("membership.grant");
    expect(html).toMatch(/page (\d+) of \1/);
  });
});

describe("audit trail export", () => {
  it("is CSV of every matching event, oldest first, whose hashes chain as recorded; the export is audited", async () => {
    const res = await fetch(`${stack.appUrl}/admin/audit/export.csv`, { headers: { Cookie: cookie } });
    expect(res.status).toBe(200);
    expect(res.headers.get("content-type")).toMatch(/^text\/csv; charset=utf-8/);
    expect(res.headers.get("content-disposition")).toMatch(
      /attachment; filename="plumbline-audit-trail-\d{8}T\d{6}Z\.csv"/,
    );
    expect(res.headers.get("x-caution")).toMatch(/Results support, but do not replace/);
    const text = await res.text();
    expect(createHash("sha256").update(text).digest("hex")).toBe(res.headers.get("x-content-sha256"));
    const rows = parse(text, { columns: true }) as Record<string, string>[];
    expect(Object.keys(rows[0])).toEqual([
      "seq",
      "at",
      "actor_id",
      "actor_name",
      "action",
      "entity_type",
      "entity_id",
      "study_id",
      "before_json",
      "after_json",
      "detail",
      "prev_hash",
      "hash",
      "mac",
    ]);
    const db = testDb(stack);
    const stored = (await db.execute("SELECT seq, hash, mac FROM audit_events ORDER BY seq")).rows;
    const exported = rows.map((r) => Number(r.seq));
    expect(exported).toEqual(stored.map((r) => Number(r.seq)).slice(0, exported.length));
    const cell = (v: string) => (v === "" ? null : v);
    let prev = "0".repeat(64);
    for (const r of rows) {
      expect(r.prev_hash).toBe(prev);
      const content = JSON.stringify({
        action: r.action,
        actorId: cell(r.actor_id),
        actorName: r.actor_name,
        afterJson: cell(r.after_json),
        at: r.at,
        beforeJson: cell(r.before_json),
        detail: cell(r.detail),
        entityId: cell(r.entity_id),
        entityType: r.entity_type,
        seq: Number(r.seq),
        studyId: cell(r.study_id),
      });
      expect(createHash("sha256").update(`${prev}\n${content}`).digest("hex")).toBe(r.hash);
      expect(r.mac).toBe(stored.find((s) => Number(s.seq) === Number(r.seq))!.mac);
      prev = r.hash;
    }
    const audit = (
      await db.execute(
        "SELECT actor_name, after_json FROM audit_events WHERE action = 'audit.export' ORDER BY seq DESC LIMIT 1",
      )
    ).rows[0];
    expect(audit.actor_name).toBe("Morgan Reyes");
    const after = JSON.parse(String(audit.after_json));
    expect(after).toMatchObject({
      events: rows.length,
      lastSeq: exported.at(-1),
      sha256: res.headers.get("x-content-sha256"),
    });
  });

  it("honours the page's filters", async () => {
    const res = await fetch(`${stack.appUrl}/admin/audit/export.csv?action=study.`, {
      headers: { Cookie: cookie },
    });
    const rows = parse(await res.text(), { columns: true }) as Record<string, string>[];
    expect(rows.length).toBeGreaterThan(0);
    expect(rows.every((r) => r.action.startsWith("study."))).toBe(true);
  });

  it("is refused to everyone who may not read the audit trail", async () => {
    const other = await sessionCookieFor(stack, "priya.lindqvist@plumbline.example");
    const res = await fetch(`${stack.appUrl}/admin/audit/export.csv`, { headers: { Cookie: other } });
    expect(res.status).toBe(403);
  });
});
