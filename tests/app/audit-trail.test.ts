/**
 * The administrator's audit page verifies the chain of the running server's database and
 * names the first broken link when a row is edited behind the app's back.
 */
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
    const html = await auditPage();
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
      await db.execute({ sql: "UPDATE audit_events SET detail = ? WHERE seq = 2", args: ["edited behind the app's back"] });
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
