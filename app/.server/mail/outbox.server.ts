/**
 * The outbox: notifications are written to `mail_outbox` in the caller's transaction (so a
 * message exists only if the event it announces commits), one row per recipient, each with a
 * background job that sends it. When the SMTP server cannot take a message, the row stays
 * queued with the reason and the time of its next try (30 s, doubling up to an hour); after
 * MAX_MAIL_ATTEMPTS tries it ends as failed. The action that queued it has long succeeded.
 */
import { and, desc, eq, lte } from "drizzle-orm";
import { z } from "zod";
import { config } from "../config.server";
import { db, newId, t, writeTransaction, type DbOrTx } from "../db/index.server";
import { enqueueJob, registerJobHandler } from "../jobs/jobs.server";
import type { ComposedMessage } from "./compose";
import { sendMail } from "./transport.server";

export const MAIL_JOB = "mail.send";
export const MAX_MAIL_ATTEMPTS = 10;
/**
 * While a send job waits, the row's `nextAttemptAt` is this far ahead: a lease. The job replaces
 * it with the outcome; if the job was lost (a server stopped), the lease runs out and the
 * message is queued again.
 */
const JOB_LEASE_MS = 10 * 60 * 1000;

export type OutboxMessage = typeof t.mailOutbox.$inferSelect;

export const MAIL_KINDS = {
  plan_awaits_approval: "Plan version awaits approval",
  rerun_awaits_signoff: "Rerun awaits sign-off",
  report_published: "Report published",
  appendix_exported: "Appendix exported",
} as const;
export type MailKind = keyof typeof MAIL_KINDS;

/** Wait before try number `attempts + 1`: 30 s, 1 min, 2 min, … at most one hour. */
export function retryDelayMs(attempts: number): number {
  return Math.min(30_000 * 2 ** Math.max(0, attempts - 1), 60 * 60 * 1000);
}

export interface QueuedMail {
  kind: MailKind;
  studyId: string | null;
  /** Path under APP_URL that the message links to. */
  linkPath: string;
  recipients: { email: string }[];
  message: ComposedMessage;
}

/** Absolute link for a path in the app. */
export const appLink = (linkPath: string): string => new URL(linkPath, config.APP_URL).toString();

/** Writes one outbox row per distinct recipient and a send job for each, in the caller's transaction. */
export async function queueMail(tx: DbOrTx, mail: QueuedMail): Promise<string[]> {
  const emails = [
    ...new Set(mail.recipients.map((r) => r.email.trim().toLowerCase()).filter(Boolean)),
  ].sort();
  const ids: string[] = [];
  for (const recipient of emails) {
    const id = newId();
    await tx.insert(t.mailOutbox).values({
      id,
      recipient,
      subject: mail.message.subject,
      textBody: mail.message.text,
      htmlBody: mail.message.html,
      kind: mail.kind,
      studyId: mail.studyId,
      linkPath: mail.linkPath,
      nextAttemptAt: new Date(Date.now() + JOB_LEASE_MS).toISOString(),
    });
    await enqueueJob(tx, MAIL_JOB, { outboxId: id });
    ids.push(id);
  }
  return ids;
}

/** Tries to send one queued message now and records the outcome on its row. */
export async function deliverQueued(
  outboxId: string,
  now: () => Date = () => new Date(),
): Promise<OutboxMessage["status"] | null> {
  const [m] = await db.select().from(t.mailOutbox).where(eq(t.mailOutbox.id, outboxId)).limit(1);
  if (!m || m.status !== "queued") return m?.status ?? null;
  const attempts = m.attempts + 1;
  let error: string | null = null;
  try {
    await sendMail({ to: m.recipient, subject: m.subject, text: m.textBody, html: m.htmlBody });
  } catch (e) {
    error = e instanceof Error ? e.message : String(e);
  }
  const at = now();
  const status = error === null ? "sent" : attempts >= MAX_MAIL_ATTEMPTS ? "failed" : "queued";
  await writeTransaction((tx) =>
    tx
      .update(t.mailOutbox)
      .set({
        status,
        attempts,
        lastAttemptAt: at.toISOString(),
        lastError: error,
        sentAt: status === "sent" ? at.toISOString() : null,
        nextAttemptAt:
          status === "queued" ? new Date(at.getTime() + retryDelayMs(attempts)).toISOString() : null,
      })
      .where(and(eq(t.mailOutbox.id, m.id), eq(t.mailOutbox.status, "queued"))),
  );
  return status;
}

const MailJob = z.object({ outboxId: z.string().min(1) });

/** Registers the mail job's handler (called where the job worker starts). */
export function registerMailJobs(): void {
  registerJobHandler(MAIL_JOB, async (payload) => {
    await deliverQueued(MailJob.parse(payload).outboxId);
  });
}

/**
 * Queues a send job for every message whose next try is due (or whose send job was lost).
 * Returns how many. Runs on a timer in each server process; tests call it with a later `now`.
 */
export async function queueDueRetries(now: Date = new Date()): Promise<number> {
  const due = and(eq(t.mailOutbox.status, "queued"), lte(t.mailOutbox.nextAttemptAt, now.toISOString()));
  // Read first, so an idle timer takes no write lock.
  const [any] = await db.select({ id: t.mailOutbox.id }).from(t.mailOutbox).where(due).limit(1);
  if (!any) return 0;
  return writeTransaction(async (tx) => {
    const rows = await tx.select({ id: t.mailOutbox.id }).from(t.mailOutbox).where(due);
    const lease = new Date(now.getTime() + JOB_LEASE_MS).toISOString();
    for (const r of rows) {
      await tx.update(t.mailOutbox).set({ nextAttemptAt: lease }).where(eq(t.mailOutbox.id, r.id));
      await enqueueJob(tx, MAIL_JOB, { outboxId: r.id });
    }
    return rows.length;
  });
}

let retrying = false;

/** Starts this process's timer that re-queues messages whose next try is due. */
export function startMailRetries(intervalMs = 5_000): void {
  if (retrying) return;
  retrying = true;
  setInterval(() => {
    queueDueRetries().catch((e: unknown) =>
      console.error("Mail retries:", e instanceof Error ? e.message : e),
    );
  }, intervalMs).unref();
}

/** The newest messages first, for the administrator's outbox page. */
export async function listOutbox(limit = 200): Promise<(OutboxMessage & { studyCode: string | null })[]> {
  const rows = await db
    .select({ m: t.mailOutbox, code: t.studies.code })
    .from(t.mailOutbox)
    .leftJoin(t.studies, eq(t.studies.id, t.mailOutbox.studyId))
    .orderBy(desc(t.mailOutbox.createdAt))
    .limit(limit);
  return rows.map((r) => ({ ...r.m, studyCode: r.code }));
}

/** Counts by status, for the page's summary line. */
export async function outboxCounts(): Promise<Record<OutboxMessage["status"], number>> {
  const rows = await db.select({ status: t.mailOutbox.status }).from(t.mailOutbox);
  const counts = { queued: 0, sent: 0, failed: 0 };
  for (const r of rows) counts[r.status] += 1;
  return counts;
}
