/**
 * Background jobs: a table in the database and a worker loop in each server process. A job is
 * claimed atomically (so several instances can share one database), runs off the request,
 * and ends as done or failed with its reason. A running job's worker renews its heartbeat;
 * a job left "running" by a process that stopped (its heartbeat went stale, or its process on
 * this machine is gone) is picked up again by the recovery every worker runs at start and
 * then periodically, or failed with the reason after three attempts. A job that fails, for
 * whatever reason, tells its kind's failure hook, so what it worked on (a rerun) never stays
 * "running".
 */
import { EventEmitter } from "node:events";
import { randomUUID } from "node:crypto";
import os from "node:os";
import { and, asc, eq, sql } from "drizzle-orm";
import { db, isoNow, newId, t, writeTransaction, type DbOrTx } from "../db/index.server";

export type Job = typeof t.jobs.$inferSelect;
export type JobHandler = (payload: unknown, job: Job) => Promise<void>;
/** Told when a job of its kind ends failed, with the reason stored on the job. */
export type JobFailureHook = (job: Job, reason: string) => Promise<void>;

const handlers = new Map<string, JobHandler>();
const failureHooks = new Map<string, JobFailureHook>();
const wake = new EventEmitter();
const HOST = os.hostname();
/** host/pid/random: recovery on the same host can tell a live worker from a dead one. */
const WORKER_ID = `${HOST}/${process.pid}/${randomUUID().slice(0, 8)}`;
const MAX_ATTEMPTS = 3;
/** How often a running job's heartbeat is renewed. */
export const HEARTBEAT_MS = 5_000;
/**
 * A running job whose heartbeat is older than this is taken to be orphaned. Six heartbeats:
 * a fit that holds the event loop for a few seconds does not look dead.
 */
export const STALE_MS = 30_000;
/** How often each worker looks for orphaned jobs. */
export const RECOVER_EVERY_MS = 10_000;

export function registerJobHandler(kind: string, handler: JobHandler): void {
  handlers.set(kind, handler);
}

/** What to do when a job of this kind ends failed (the handler threw, its input was invalid, no handler, or its server stopped too often). */
export function registerJobFailureHook(kind: string, hook: JobFailureHook): void {
  failureHooks.set(kind, hook);
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
    const [next] = await tx
      .select()
      .from(t.jobs)
      .where(eq(t.jobs.status, "queued"))
      .orderBy(asc(t.jobs.createdAt))
      .limit(1);
    if (!next) return null;
    const [claimed] = await tx
      .update(t.jobs)
      .set({
        status: "running",
        lockedBy: WORKER_ID,
        heartbeatAt: isoNow(),
        attempts: sql`${t.jobs.attempts} + 1`,
      })
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
      // Only while this worker still holds it: a job recovered from under a stalled worker belongs to its new one.
      .where(and(eq(t.jobs.id, job.id), eq(t.jobs.lockedBy, WORKER_ID))),
  );
}

function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === "EPERM";
  }
}

/**
 * True when the worker that holds a job is certainly gone: it ran on this host and its process
 * no longer exists, or its process id is now this process's under another worker id (a
 * restarted container reuses the id). Workers of other hosts are judged by heartbeat only.
 */
function workerGone(lockedBy: string | null): boolean {
  if (!lockedBy || lockedBy === WORKER_ID) return false;
  const [host, pidText] = lockedBy.split("/");
  const pid = Number(pidText);
  if (host !== HOST || !Number.isInteger(pid) || pid <= 0) return false;
  return pid === process.pid || !processAlive(pid);
}

/**
 * Jobs orphaned by a stopped process: queued again, or failed with the reason (and their
 * failure hooks told). Returns the failed ones.
 */
export async function recoverInterruptedJobs(): Promise<Job[]> {
  const cutoff = Date.now() - STALE_MS;
  const orphaned = (j: Job) => !j.heartbeatAt || Date.parse(j.heartbeatAt) < cutoff || workerGone(j.lockedBy);
  // A read first: the periodic pass takes the write lock only when there is something to recover.
  if (!(await db.select().from(t.jobs).where(eq(t.jobs.status, "running"))).some(orphaned)) return [];
  const failed = await writeTransaction(async (tx) => {
    const running = await tx.select().from(t.jobs).where(eq(t.jobs.status, "running"));
    const stale = running.filter(orphaned);
    const out: Job[] = [];
    for (const j of stale) {
      if (j.attempts >= MAX_ATTEMPTS) {
        const error = `The server stopped while this job ran, ${j.attempts} times; it was not tried again.`;
        await tx
          .update(t.jobs)
          .set({ status: "failed", error, finishedAt: isoNow(), lockedBy: null })
          .where(eq(t.jobs.id, j.id));
        out.push({ ...j, status: "failed", error });
      } else {
        await tx
          .update(t.jobs)
          .set({ status: "queued", lockedBy: null, progress: "picked up again after its server stopped" })
          .where(eq(t.jobs.id, j.id));
      }
    }
    return out;
  });
  for (const j of failed) await tellFailure(j, j.error ?? "interrupted");
  return failed;
}

async function tellFailure(job: Job, reason: string): Promise<void> {
  const hook = failureHooks.get(job.kind);
  if (!hook) return;
  try {
    await hook(job, reason);
  } catch (e) {
    console.error(
      `Could not record the failure of job ${job.id} (${job.kind}):`,
      e instanceof Error ? e.message : e,
    );
  }
}

async function heartbeat(job: Job): Promise<void> {
  await writeTransaction((tx) =>
    tx
      .update(t.jobs)
      .set({ heartbeatAt: isoNow() })
      .where(and(eq(t.jobs.id, job.id), eq(t.jobs.lockedBy, WORKER_ID))),
  );
}

/** Runs one queued job if there is one; true when it ran one. Exported for tests. */
export async function runOneJob(): Promise<boolean> {
  const job = await claimNext();
  if (!job) return false;
  const handler = handlers.get(job.kind);
  let error: string | null = null;
  if (!handler) {
    error = `No handler for jobs of kind "${job.kind}" in this server version.`;
  } else {
    const beat = setInterval(() => void heartbeat(job).catch(() => undefined), HEARTBEAT_MS);
    beat.unref();
    try {
      let payload: unknown;
      try {
        payload = JSON.parse(job.payloadJson);
      } catch {
        throw new Error("its input is not valid JSON");
      }
      await handler(payload, job);
    } catch (e) {
      error = e instanceof Error ? e.message : String(e);
    } finally {
      clearInterval(beat);
    }
  }
  await finish(job, error);
  if (error) await tellFailure({ ...job, status: "failed", error }, error);
  return true;
}

let started = false;

/** Starts this process's worker loop (once): it runs jobs as they are queued and recovers orphaned ones. */
export function startJobWorker(): void {
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
  const recover = () =>
    recoverInterruptedJobs()
      .catch((e: unknown) => console.error("Background job recovery:", e instanceof Error ? e.message : e))
      .finally(() => void tick());
  void recover();
  wake.on("job", () => void tick());
  // Jobs queued by another instance sharing the database.
  setInterval(() => void tick(), 1000).unref();
  // Jobs whose worker stopped while this one runs (another instance, or a kill and restart).
  setInterval(() => void recover(), RECOVER_EVERY_MS).unref();
}

export async function getJob(id: string): Promise<Job | null> {
  const [j] = await db.select().from(t.jobs).where(eq(t.jobs.id, id)).limit(1);
  return j ?? null;
}
