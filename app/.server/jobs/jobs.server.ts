/**
 * Background jobs: a table in the database and a worker loop in each server process. A job is
 * claimed atomically (so several instances can share one database), runs off the request,
 * and ends as done or failed with its reason. A job left "running" by a process that stopped
 * is picked up again at the next start, or failed with the reason after three attempts.
 */
import { EventEmitter } from "node:events";
import { randomUUID } from "node:crypto";
import { and, asc, eq, lt, sql } from "drizzle-orm";
import { db, isoNow, newId, t, writeTransaction, type DbOrTx } from "../db/index.server";

export type Job = typeof t.jobs.$inferSelect;
export type JobHandler = (payload: unknown, job: Job) => Promise<void>;

const handlers = new Map<string, JobHandler>();
const wake = new EventEmitter();
const WORKER_ID = `${process.pid}-${randomUUID().slice(0, 8)}`;
const MAX_ATTEMPTS = 3;
/** A running job whose heartbeat is older than this is taken to be orphaned. */
const STALE_MS = 30_000;

export function registerJobHandler(kind: string, handler: JobHandler): void {
  handlers.set(kind, handler);
}

/** Queues a job inside the caller's transaction, so the job exists only if the change commits. */
export async function enqueueJob(tx: DbOrTx, kind: string, payload: unknown): Promise<string> {
  const id = newId();
  await tx.insert(t.jobs).values({ id, kind, payloadJson: JSON.stringify(payload) });
  setImmediate(() => wake.emit("job"));
  return id;
}

async function claimNext(): Promise<Job | null> {
  return writeTransaction(async (tx) => {
    const [next] = await tx.select().from(t.jobs).where(eq(t.jobs.status, "queued")).orderBy(asc(t.jobs.createdAt)).limit(1);
    if (!next) return null;
    const [claimed] = await tx
      .update(t.jobs)
      .set({ status: "running", lockedBy: WORKER_ID, heartbeatAt: isoNow(), attempts: sql`${t.jobs.attempts} + 1` })
      .where(and(eq(t.jobs.id, next.id), eq(t.jobs.status, "queued")))
      .returning();
    return claimed ?? null;
  });
}

async function finish(job: Job, error: string | null): Promise<void> {
  await writeTransaction((tx) =>
    tx
      .update(t.jobs)
      .set({ status: error ? "failed" : "done", error, finishedAt: isoNow(), lockedBy: null })
      .where(eq(t.jobs.id, job.id)),
  );
}

/** Jobs orphaned by a stopped process: queued again, or failed with the reason. Returns the failed ones. */
export async function recoverInterruptedJobs(): Promise<Job[]> {
  const cutoff = new Date(Date.now() - STALE_MS).toISOString();
  return writeTransaction(async (tx) => {
    const stale = await tx.select().from(t.jobs).where(and(eq(t.jobs.status, "running"), lt(t.jobs.heartbeatAt, cutoff)));
    const failed: Job[] = [];
    for (const j of stale) {
      if (j.attempts >= MAX_ATTEMPTS) {
        const error = `The server stopped while this job ran, ${j.attempts} times; it was not tried again.`;
        await tx.update(t.jobs).set({ status: "failed", error, finishedAt: isoNow(), lockedBy: null }).where(eq(t.jobs.id, j.id));
        failed.push({ ...j, status: "failed", error });
      } else {
        await tx.update(t.jobs).set({ status: "queued", lockedBy: null, progress: "picked up again after a restart" }).where(eq(t.jobs.id, j.id));
      }
    }
    return failed;
  });
}

/** Runs one queued job if there is one; true when it ran one. Exported for tests. */
export async function runOneJob(): Promise<boolean> {
  const job = await claimNext();
  if (!job) return false;
  const handler = handlers.get(job.kind);
  if (!handler) {
    await finish(job, `No handler for jobs of kind "${job.kind}" in this server version.`);
    return true;
  }
  try {
    await handler(JSON.parse(job.payloadJson), job);
    await finish(job, null);
  } catch (e) {
    await finish(job, e instanceof Error ? e.message : String(e));
  }
  return true;
}

let started = false;

/** Starts this process's worker loop (once): it runs jobs as they are queued. */
export function startJobWorker(onRecoveredFailure?: (job: Job) => Promise<void>): void {
  if (started) return;
  started = true;
  let busy = false;
  const tick = async () => {
    if (busy) return;
    busy = true;
    try {
      while (await runOneJob()) {
        // keep going while there is work
      }
    } catch (e) {
      console.error("Background job worker:", e instanceof Error ? e.message : e);
    } finally {
      busy = false;
    }
  };
  void recoverInterruptedJobs()
    .then(async (failed) => {
      for (const j of failed) await onRecoveredFailure?.(j);
    })
    .finally(() => void tick());
  wake.on("job", () => void tick());
  // Jobs queued by another instance sharing the database.
  setInterval(() => void tick(), 1000).unref();
}

export async function getJob(id: string): Promise<Job | null> {
  const [j] = await db.select().from(t.jobs).where(eq(t.jobs.id, id)).limit(1);
  return j ?? null;
}
