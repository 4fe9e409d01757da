/**
 * Background jobs on a real SQLite file: a job runs once, a failing handler leaves its reason,
 * and a job left "running" by a stopped process is picked up again, or failed with the reason
 * after three attempts; never left running.
 */
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
    expect(await jobs.getJob(id)).toMatchObject({ status: "failed", error: "the handler gave up: column base is missing" });
  });

  it("picks up a job orphaned by a restart, and fails one orphaned three times", async () => {
    const stale = new Date(Date.now() - 120_000).toISOString();
    const again = await enqueue("test.ok", { n: "orphan" });
    const dead = await enqueue("test.ok", { n: "dead" });
    await writeTransaction(async (tx) => {
      await tx.update(t.jobs).set({ status: "running", heartbeatAt: stale, attempts: 1 }).where(eq(t.jobs.id, again));
      await tx.update(t.jobs).set({ status: "running", heartbeatAt: stale, attempts: 3 }).where(eq(t.jobs.id, dead));
    });
    const failed = await jobs.recoverInterruptedJobs();
    expect(failed.map((j) => j.id)).toEqual([dead]);
    expect(await jobs.getJob(dead)).toMatchObject({ status: "failed", error: expect.stringMatching(/server stopped while this job ran, 3 times/) });
    expect((await jobs.getJob(again))?.status).toBe("queued");
    await jobs.runOneJob();
    expect(ran).toContain("orphan");
    const running = await db.select().from(t.jobs).where(eq(t.jobs.status, "running"));
    expect(running).toEqual([]);
  });
});
