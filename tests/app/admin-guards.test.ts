/**
 * Administrator pages on the running server answer bad input with a status and a message,
 * never a 500: an over-long audit filter (400), a role grant naming an unknown person or study
 * (404), and a grant to oneself (403, recorded in the audit trail: segregation of duties, so
 * an administrator cannot make himself the approver of a plan).
 */
import { beforeAll, describe, expect, inject, it } from "vitest";
import { personId, sessionCookieFor, studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");
const MORGAN = "morgan.reyes@plumbline.example";
let cookie = "";
let studyId = "";

beforeAll(async () => {
  cookie = await sessionCookieFor(stack, MORGAN);
  studyId = await studyIdByCode(stack, "QMT-301");
});

const grant = (fields: Record<string, string>) =>
  fetch(`${stack.appUrl}/admin/people`, {
    method: "POST",
    headers: { Cookie: cookie, Origin: stack.appUrl, "Content-Type": "application/x-www-form-urlencoded" },
    body: new URLSearchParams(fields),
  });

describe("audit filter", () => {
  it("a filter longer than its limit answers 400 naming the field, not 500", async () => {
    const res = await fetch(
      `${stack.appUrl}/admin/audit?action=${"a".repeat(5000)}&actor=${"b".repeat(5000)}`,
      { headers: { Cookie: cookie } },
    );
    expect(res.status).toBe(400);
    const html = await res.text();
    expect(html).toContain("The audit filter was not applied");
    expect(html).toContain("takes at most 60 characters");
  });
});

describe("role grants", () => {
  it("an unknown person or study answers 404 with a message", async () => {
    const noPerson = await grant({ personId: "no-such-person", studyId, role: "biostatistician" });
    expect(noPerson.status).toBe(404);
    expect(await noPerson.text()).toContain("There is no person with id no-such-person");
    const noStudy = await grant({
      personId: await personId(stack, "helen.achter@plumbline.example"),
      studyId: "no-such-study",
      role: "biostatistician",
    });
    expect(noStudy.status).toBe(404);
    expect(await noStudy.text()).toContain("There is no study with id no-such-study");
  });

  it("an administrator cannot grant himself a study role: 403, audited, no role", async () => {
    const morgan = await personId(stack, MORGAN);
    const res = await grant({ personId: morgan, studyId, role: "biostatistician" });
    expect(res.status).toBe(403);
    expect(await res.text()).toContain("another administrator must grant it");
    const role = await testDb(stack).execute({
      sql: "SELECT count(*) AS n FROM study_memberships WHERE person_id = ? AND study_id = ?",
      args: [morgan, studyId],
    });
    expect(Number(role.rows[0].n)).toBe(0);
    const audited = await testDb(stack).execute({
      sql: "SELECT count(*) AS n FROM audit_events WHERE action = 'membership.self_grant_refused' AND actor_id = ?",
      args: [morgan],
    });
    expect(Number(audited.rows[0].n)).toBeGreaterThan(0);
  });
});
