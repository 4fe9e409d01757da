/**
 * The running server's own worker sends what lands in its outbox to the SMTP fake started by
 * the test stack, and the administrator's outbox page shows both sides: the outbox row as sent
 * and the message the fake received.
 */
import { randomUUID } from "node:crypto";
import { describe, expect, it, inject } from "vitest";
import { waitForMessage } from "../../idp-fake/smtp/inbox";
import { sessionCookieFor, studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");

describe("administrator's e-mail outbox", () => {
  it("lists a queued message as sent once the server's worker delivered it, beside what the SMTP fake received", async () => {
    const studyId = await studyIdByCode(stack, "QMT-301");
    const id = randomUUID();
    const subject = `QMT-301: outbox check ${id.slice(0, 8)}`;
    const text = `A message queued for the outbox check.\n\nOpen the study: ${stack.appUrl}/studies/${studyId}\n`;
    const db = testDb(stack);
    // What queueMail writes: the row and its send job (the server polls the jobs table).
    await db.batch(
      [
        {
          sql: "INSERT INTO mail_outbox (id, recipient, subject, text_body, html_body, kind, study_id, link_path) VALUES (?, ?, ?, ?, ?, 'plan_awaits_approval', ?, ?)",
          args: [
            id,
            "tomas.berg@plumbline.example",
            subject,
            text,
            `<p>${text}</p>`,
            studyId,
            `/studies/${studyId}`,
          ],
        },
        {
          sql: "INSERT INTO jobs (id, kind, payload_json) VALUES (?, 'mail.send', ?)",
          args: [randomUUID(), JSON.stringify({ outboxId: id })],
        },
      ],
      "write",
    );

    const got = await waitForMessage(stack.smtpStateDir, (m) => m.subject === subject, 15_000);
    expect(got.envelopeTo).toEqual(["tomas.berg@plumbline.example"]);
    expect(got.text).toContain(`${stack.appUrl}/studies/${studyId}`);

    const res = await fetch(`${stack.appUrl}/admin/outbox`, {
      headers: { Cookie: await sessionCookieFor(stack, "morgan.reyes@plumbline.example") },
    });
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain("Received by the local SMTP fake");
    // Once in the outbox table, once in the fake's list.
    expect(html.split(subject).length - 1).toBeGreaterThanOrEqual(2);
    const row = (
      await db.execute({ sql: "SELECT status, attempts FROM mail_outbox WHERE id = ?", args: [id] })
    ).rows[0];
    expect(row).toMatchObject({ status: "sent", attempts: 1 });
  });
});
