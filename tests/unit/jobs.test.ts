/**
 * Background jobs on a real SQLite file: a job runs once, a failing handler leaves its reason,
 * and a job left "running" by a stopped process is picked up again, or failed with the reason
 * after three attempts; never left running. Every way a job fails (the handler throws, its
 * input is not valid, no handler) tells its kind's failure hook. A job whose process on this
 * host is gone is recovered at once, whatever its heartbeat says; the worker recovers orphaned
 * jobs periodically, not only when it starts.
 */
import { spawnSync } from "node:child_process";
import os from "node:os";
import { describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const jobs = await import("~/.server/jobs/jobs.server");
const { db, t, writeTransaction } = await import("~/.server/db/index.server");
const { eq } = await import("drizzle-orm");

const ran: string[] = [];
jobs.registerJobHandler("test.ok", async (p) => {
  ran.push((p as { n: string }).n);
});
jobs.registerJobHandler("test.fail", async () => {
  throw new Error("the handler gave up: column base is missing");
});

async function enqueue(kind: string, payload: unknown): Promise<string> {
  return writeTransaction((tx) => jobs.enqueueJob(tx, kind, payload));
}

describe("jobs", () => {
  it("runs each queued job once, in order", async () => {
    await enqueue("test.ok", { n: "a" });
    await enqueue("test.ok", { n: "b" });
    while (await jobs.runOneJob()) {
      // drain
    }
    expect(ran).toEqual(["a", "b"]);
    expect(await jobs.runOneJob()).toBe(false);
  });

  it("keeps the reason when a job fails", async () => {
    const id = await enqueue("test.fail", {});
    await jobs.runOneJob();
    expect(await jobs.getJob(id)).toMatchObject({
      status: "failed",
      error: "the handler gave up: column base is missing",
    });
  });

  it("picks up a job orphaned by a restart, and fails one orphaned three times", async () => {
    const stale = new Date(Date.now() - 120_000).toISOString();
    const again = await enqueue("test.ok", { n: "orphan" });
    const dead = await enqueue("test.ok", { n: "dead" });
    await writeTransaction(async (tx) => {
      await tx
        .update(t.jobs)
        .set({ status: "running", heartbeatAt: stale, attempts: 1 })
        .where(eq(t.jobs.id, again));
      await tx
        .update(t.jobs)
        .set({ status: "running", heartbeatAt: stale, attempts: 3 })
        .where(eq(t.jobs.id, dead));
    });
    const failed = await jobs.recoverInterruptedJobs();
    expect(failed.map((j) => j.id)).toEqual([dead]);
    expect(await jobs.getJob(dead)).toMatchObject({
      status: "failed",
      error: expect.stringMatching(/server stopped while this job ran, 3 times/),
    });
    expect((await jobs.getJob(again))?.status).toBe("queued");
    await jobs.runOneJob();
    expect(ran).toContain("orphan");
    const running = await db.select().from(t.jobs).where(eq(t.jobs.status, "running"));
    expect(running).toEqual([]);
  });

  it("tells the failure hook of every failed job: a throwing handler, invalid input, no handler", async () => {
    const told: { kind: string; reason: string }[] = [];
    for (const kind of ["test.fail", "test.ok", "test.unknown"])
      jobs.registerJobFailureHook(kind, async (job, reason) => void told.push({ kind: job.kind, reason }));
    const thrown = await enqueue("test.fail", {});
    const invalid = await writeTransaction(async (tx) => {
      const id = await jobs.enqueueJob(tx, "test.ok", {});
      await tx.update(t.jobs).set({ payloadJson: "{not json" }).where(eq(t.jobs.id, id));
      return id;
    });
    const unknown = await enqueue("test.unknown", {});
    while (await jobs.runOneJob()) {
      // drain
    }
    expect(told).toEqual([
      { kind: "test.fail", reason: "the handler gave up: column base is missing" },
      { kind: "test.ok", reason: "its input is not valid JSON" },
      { kind: "test.unknown", reason: 'No handler for jobs of kind "test.unknown" in this server version.' },
    ]);
    for (const id of [thrown, invalid, unknown]) expect((await jobs.getJob(id))?.status).toBe("failed");
  });

  it("recovers at once a job whose worker process on this host is gone, though its heartbeat is fresh", async () => {
    const gone = spawnSync(process.execPath, ["-e", "process.stdout.write(String(process.pid))"], {
      encoding: "utf8",
    });
    const deadPid = Number(gone.stdout);
    const id = await enqueue("test.ok", { n: "killed" });
    await writeTransaction((tx) =>
      tx
        .update(t.jobs)
        .set({
          status: "running",
          heartbeatAt: new Date().toISOString(),
          attempts: 1,
          lockedBy: `${os.hostname()}/${deadPid}/0000abcd`,
        })
        .where(eq(t.jobs.id, id)),
    );
    await jobs.recoverInterruptedJobs();
    expect((await jobs.getJob(id))?.status).toBe("queued");
    await jobs.runOneJob();
    expect(ran).toContain("killed");
  });

  it("keeps a job of a live worker elsewhere until its heartbeat is stale", async () => {
    const id = await enqueue("test.ok", { n: "elsewhere" });
    await writeTransaction((tx) =>
      tx
        .update(t.jobs)
        .set({
          status: "running",
          heartbeatAt: new Date().toISOString(),
          attempts: 1,
          lockedBy: "another-host/4242/0000abcd",
        })
        .where(eq(t.jobs.id, id)),
    );
    await jobs.recoverInterruptedJobs();
    expect((await jobs.getJob(id))?.status).toBe("running");
    await writeTransaction((tx) =>
      tx.update(t.jobs).set({ status: "done", lockedBy: null }).where(eq(t.jobs.id, id)),
    );
  });

  it("recovers an orphaned job while the worker runs, not only at its start", async () => {
    jobs.startJobWorker();
    // Let the start-up recovery pass first: this job is orphaned afterwards.
    await new Promise((r) => setTimeout(r, 500));
    const id = await enqueue("test.ok", { n: "later" });
    for (let i = 0; i < 50 && (await jobs.getJob(id))?.status !== "done"; i++)
      await new Promise((r) => setTimeout(r, 20));
    const stale = new Date(Date.now() - jobs.STALE_MS - 1_000).toISOString();
    const orphan = await enqueue("test.ok", { n: "orphan-later" });
    await writeTransaction((tx) =>
      tx
        .update(t.jobs)
        .set({ status: "running", heartbeatAt: stale, attempts: 1, lockedBy: "another-host/4242/0000abcd" })
        .where(eq(t.jobs.id, orphan)),
    );
    const started = Date.now();
    while (
      (await jobs.getJob(orphan))?.status !== "done" &&
      Date.now() - started < jobs.RECOVER_EVERY_MS + 3_000
    )
      await new Promise((r) => setTimeout(r, 100));
    expect((await jobs.getJob(orphan))?.status).toBe("done");
    expect(ran).toContain("orphan-later");
  }, 30_000);
});
