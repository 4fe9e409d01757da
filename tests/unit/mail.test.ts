/**
 * E-mail notifications over real SMTP: the services queue each message in the outbox with the
 * event it announces, a background job hands it to the local SMTP fake (idp-fake/smtp, its own
 * process on a free port), and the fake's inbox shows what arrived. Also: with the SMTP server
 * down the action still succeeds and the message waits, then goes out once the server is back;
 * and no message carries subject-level data.
 */
import { demoPrimaryForm } from "../support/demo-forms";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { readInbox, waitForMessage, type ReceivedMessage } from "../../idp-fake/smtp/inbox";
import { startSmtpFake, type RunningSmtpFake } from "../../idp-fake/smtp/launch";
import { useTempDatabase } from "../support/temp-db";

const { dir } = useTempDatabase();
const smtpStateDir = `${dir}/smtp`;
let smtp: RunningSmtpFake = await startSmtpFake({ port: 0, stateDir: smtpStateDir });
const APP_URL = "http://plumbline.test:5180";
process.env.APP_URL = APP_URL;
process.env.SMTP_HOST = smtp.smtpHost;
process.env.SMTP_PORT = String(smtp.smtpPort);
process.env.MAIL_FROM = "Plumbline <no-reply@plumbline.example>";

const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { generateDemoDataset } = await import("~/.server/demo/demo-dataset");
const { db, newId, t, writeTransaction } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
const reruns = await import("~/.server/reruns/reruns.server");
const findings = await import("~/.server/reruns/findings.server");
const { runOneJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();
const { queueDueRetries, retryDelayMs } = await import("~/.server/mail/outbox.server");
const { notifyAppendixExported } = await import("~/.server/mail/notifications.server");
const { CAUTION } = await import("~/shared/caution");
const { eq } = await import("drizzle-orm");

type Actor = { id: string; name: string };
let studyId = "";
let priya: Actor;
let tomas: Actor;
let helen: Actor;
let versionId = "";
let rerunId = "";

async function person(email: string): Promise<Actor> {
  const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
  return { id: p.id, name: p.displayName };
}

async function drain(): Promise<void> {
  while (await runOneJob()) {
    // run every queued job
  }
}

const outbox = () => db.select().from(t.mailOutbox);
const to = (email: string) => (m: ReceivedMessage) => m.envelopeTo.includes(email);

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error(`seed failed: ${seeded.reason}`);
  studyId = seeded.studyId;
  priya = await person("priya.lindqvist@plumbline.example");
  tomas = await person("tomas.berg@plumbline.example");
  helen = await person("helen.achter@plumbline.example");
});

afterAll(async () => {
  await smtp.stop();
});

describe("notification e-mail", () => {
  it("arrives over SMTP at the fake, for the biostatistician who may approve, with a link to the plan version", async () => {
    const created = await plans.createPlan(priya, studyId, {
      title: "Efficacy models",
      sapName: "Statistical analysis plan",
      sapVersion: "2.0",
      sapDate: "2026-10-01",
    });
    versionId = created.versionId;
    const locked = await listLockedVersions(studyId);
    const v = validatePlannedModel(
      readPlannedModelForm(
        demoPrimaryForm({ checks: ["cooks_distance", "shapiro_wilk", "breusch_pagan"], sensitivity: false }),
      ),
      locked.map((x) => ({ name: x.datasetName, columns: x.columns })),
      [],
    );
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    await plans.savePlannedModel(priya, studyId, versionId, 1, null, v.model);
    await plans.submitForApproval(priya, studyId, versionId, 2);

    // Queued with the submission, for the other biostatistician only (the author cannot approve).
    const queued = await outbox();
    expect(queued.map((m) => [m.recipient, m.status, m.kind])).toEqual([
      ["tomas.berg@plumbline.example", "queued", "plan_awaits_approval"],
    ]);
    await drain();

    const link = `${APP_URL}/studies/${studyId}/plans/${versionId}`;
    const got = await waitForMessage(smtpStateDir, to("tomas.berg@plumbline.example"));
    expect(got.envelopeTo).toEqual(["tomas.berg@plumbline.example"]);
    expect(got.envelopeFrom).toBe("no-reply@plumbline.example");
    expect(got.subject).toBe("QMT-301: plan version 1 awaits approval");
    expect(got.text).toContain(link);
    expect(got.html).toContain(`href="${link}"`);
    expect(got.text).toContain(CAUTION);
    expect(got.html).toContain(CAUTION);
    expect(got.html).toContain("'Noto Sans'");
    expect(got.html).not.toMatch(/<img|@import|<link|url\(/i);
    expect(readInbox(smtpStateDir)).toHaveLength(1);
    const [sent] = await outbox();
    expect(sent).toMatchObject({ status: "sent", attempts: 1, lastError: null });
  });

  it("waits in the outbox while SMTP is down: the action succeeds, the message is tried again and sent once the server is back", async () => {
    await plans.approvePlanVersion({ ...tomas, signedInAt: new Date().toISOString() }, studyId, versionId);
    const datasetVersionId = (await listLockedVersions(studyId))[0].versionId;
    const model = (await plans.getPlanVersion(studyId, versionId)).models[0];
    rerunId = await reruns.startRerun(priya, studyId, {
      plannedModelId: model.id,
      datasetVersionId,
      options: { variant: "planned" },
    });
    await drain();
    const open = await findings.findingsOf(rerunId);
    expect(open.length).toBeGreaterThan(0);

    const port = smtp.smtpPort;
    await smtp.stop();
    for (const f of open) {
      await findings.assessFinding(priya, studyId, f.id, {
        category: "model_assumption",
        impact: "none",
        action: "planned_sensitivity",
        rationale: "The planned sensitivity analyses leave the treatment conclusion unchanged.",
      });
    }
    // The assessments are stored although no mail server answers.
    expect((await findings.findingsOf(rerunId)).every((f) => f.assessment)).toBe(true);
    await drain();
    const waiting = (await outbox()).filter((m) => m.kind === "rerun_awaits_signoff");
    // Sign-off goes to the biostatistician who neither started the rerun nor assessed it.
    expect(waiting.map((m) => m.recipient)).toEqual(["tomas.berg@plumbline.example"]);
    const [w] = waiting;
    expect(w).toMatchObject({ status: "queued", attempts: 1 });
    expect(w.lastError).toMatch(/ECONNREFUSED|connect/i);
    expect(Date.parse(w.nextAttemptAt!) - Date.parse(w.lastAttemptAt!)).toBe(retryDelayMs(1));

    // Not before its time…
    expect(await queueDueRetries(new Date())).toBe(0);
    // …and still down at the next try: one more attempt, a longer wait.
    expect(await queueDueRetries(new Date(Date.parse(w.nextAttemptAt!) + 1))).toBe(1);
    await drain();
    const [w2] = (await outbox()).filter((m) => m.id === w.id);
    expect(w2).toMatchObject({ status: "queued", attempts: 2 });
    expect(Date.parse(w2.nextAttemptAt!) - Date.parse(w2.lastAttemptAt!)).toBe(retryDelayMs(2));

    smtp = await startSmtpFake({ port, stateDir: smtpStateDir });
    expect(await queueDueRetries(new Date(Date.parse(w2.nextAttemptAt!) + 1))).toBe(1);
    await drain();
    const [done] = (await outbox()).filter((m) => m.id === w.id);
    expect(done).toMatchObject({ status: "sent", attempts: 3, lastError: null });
    const got = await waitForMessage(
      smtpStateDir,
      (m) => to("tomas.berg@plumbline.example")(m) && /awaits sign-off/.test(m.subject),
    );
    expect(got.text).toContain(`${APP_URL}/studies/${studyId}/reruns/${rerunId}`);
  });

  it("tells the sponsor readers when the signed report is published, and the team when an appendix is exported", async () => {
    await findings.signRerun({ ...tomas, signedInAt: new Date().toISOString() }, studyId, rerunId);
    await drain();
    const report = await waitForMessage(smtpStateDir, to("sam.quill@quillmoor.example"));
    expect(report.subject).toBe("QMT-301: a signed report is published");
    expect(report.text).toContain(`${APP_URL}/studies/${studyId}/reports/${rerunId}`);
    expect(report.text).toContain("Tomas Berg");

    const appendixId = newId();
    await writeTransaction(async (tx) => {
      await tx.insert(t.appendices).values({
        id: appendixId,
        studyId,
        planVersionId: versionId,
        rerunIdsJson: JSON.stringify([rerunId]),
        sha256: "a".repeat(64),
        storedPath: "appendices/x.docx",
        byteSize: 1,
        exportedBy: helen.id,
      });
      await notifyAppendixExported(tx, { studyId, appendixId, rerunIds: [rerunId] });
    });
    await drain();
    const recipients = (await outbox()).filter((m) => m.kind === "appendix_exported").map((m) => m.recipient);
    expect(recipients).toEqual([
      "helen.achter@plumbline.example",
      "priya.lindqvist@plumbline.example",
      "tomas.berg@plumbline.example",
    ]);
    const got = await waitForMessage(
      smtpStateDir,
      (m) => to("helen.achter@plumbline.example")(m) && /appendix/i.test(m.subject),
    );
    expect(got.text).toContain(`${APP_URL}/studies/${studyId}/appendix`);
    expect((await outbox()).every((m) => m.status === "sent")).toBe(true);
  });

  it("never carries subject-level data: no subject id, no value from a data row, no estimate", async () => {
    const subjectIds = generateDemoDataset().rows.map((r) => r.subjid);
    // HTML as what a reader sees: the tags (and their inline styles) taken out.
    const visible = (html: string) => html.replace(/<[^>]*>/g, " ");
    const bodies = [
      ...(await outbox()).flatMap((m) => [m.subject, m.textBody, visible(m.htmlBody)]),
      ...readInbox(smtpStateDir).flatMap((m) => [m.subject, m.text, visible(m.html)]),
    ];
    expect(bodies.length).toBeGreaterThanOrEqual(3 * 6);
    // The flagged subjects are named on the rerun's page; they must not reach an inbox.
    const flagged = (await reruns.getRerun(studyId, rerunId)).doc!.checks.flatMap((c) =>
      (c.flagged ?? []).map((f) => String(f.id)),
    );
    expect(flagged.length).toBeGreaterThan(0);
    for (const body of bodies) {
      expect(body).not.toMatch(/QMT301-\d+/);
      for (const id of flagged) expect(body).not.toContain(id);
      // No row value or estimate: the only decimal number a message may carry is the SAP's version ("2.0").
      const decimals = (body.match(/-?\d+\.\d+/g) ?? []).filter((d) => d !== "2.0");
      expect(decimals, body.slice(0, 200)).toEqual([]);
      expect(subjectIds.filter((id) => body.includes(id))).toEqual([]);
    }
  });
});
