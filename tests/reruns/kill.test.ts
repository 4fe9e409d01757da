/**
 * A rerun never stays "running" when the server doing it dies: a worker process is killed
 * (SIGKILL, no chance to clean up) while the rerun runs, and another starts at once, as a
 * restarted server does. Within the recovery period the rerun ends, completed by the new
 * worker or failed with its reason, and its job is no longer running.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import { buildLargeStudy, type LargeStudy } from "../../scripts/lib/large-study";

useTempDatabase();
const { dbClient } = await import("~/.server/db/index.server");
const reruns = await import("~/.server/reruns/reruns.server");
const { STALE_MS, RECOVER_EVERY_MS } = await import("~/.server/jobs/jobs.server");

const children: ChildProcess[] = [];
afterAll(() => {
  for (const c of children) if (c.exitCode === null) c.kill("SIGKILL");
});

function startWorker(): Promise<ChildProcess> {
  const child = spawn(process.execPath, ["--import", "tsx", "tests/reruns/worker-child.ts"], {
    env: process.env,
    stdio: ["ignore", "pipe", "pipe"],
  });
  children.push(child);
  let out = "";
  return new Promise((resolve, reject) => {
    child.stdout?.on("data", (d: Buffer) => {
      out += d.toString();
      if (out.includes("started")) resolve(child);
    });
    child.stderr?.on("data", (d: Buffer) => (out += d.toString()));
    child.on("exit", (code) => reject(new Error(`the worker ended before it started (${code}): ${out}`)));
  });
}

const statusOf = async (rerunId: string) => {
  const rs = await dbClient.execute({
    sql: "SELECT status, failure_reason FROM reruns WHERE id = ?",
    args: [rerunId],
  });
  return { status: String(rs.rows[0].status), reason: rs.rows[0].failure_reason as string | null };
};

let study: LargeStudy;
beforeAll(async () => {
  // 10 000 subjects: the fit and its checks take long enough to be caught half-way.
  study = await buildLargeStudy({ subjects: 10_000 });
}, 120_000);

describe("a rerun whose server is killed half-way", () => {
  it("ends (completed or failed with its reason) after an immediate restart, within the recovery period", async () => {
    let rerunId = "";
    // Catch a rerun while it runs; a rerun that finished before the kill does not count, so try again.
    for (let attempt = 0; attempt < 3 && !rerunId; attempt++) {
      const id = await reruns.startRerun(study.people.priya, study.studyId, {
        plannedModelId: study.plannedModelIds.adeff10k,
        datasetVersionId: study.datasetVersionIds.adeff10k,
        options: { variant: "planned" },
      });
      const worker = await startWorker();
      for (let i = 0; i < 2000; i++) {
        const s = (await statusOf(id)).status;
        if (s === "running") {
          worker.kill("SIGKILL");
          rerunId = id;
          break;
        }
        if (s !== "queued") break;
        await new Promise((r) => setTimeout(r, 5));
      }
      if (worker.exitCode === null) worker.kill("SIGKILL");
      await new Promise((r) =>
        worker.exitCode !== null || worker.signalCode !== null ? r(null) : worker.once("exit", r),
      );
    }
    expect(rerunId, "no rerun was caught running").not.toBe("");
    expect((await statusOf(rerunId)).status).toBe("running");

    const restartedAt = Date.now();
    await startWorker();
    const period = STALE_MS + RECOVER_EVERY_MS + 5_000;
    const jobRunning = async () =>
      Number(
        (
          await dbClient.execute({
            sql: "SELECT count(*) AS n FROM jobs WHERE status = 'running' AND payload_json LIKE ?",
            args: [`%${rerunId}%`],
          })
        ).rows[0].n,
      );
    let ended = await statusOf(rerunId);
    // The rerun's row ends first, its job a moment later: wait for both.
    while (
      (ended.status === "running" || ended.status === "queued" || (await jobRunning()) > 0) &&
      Date.now() - restartedAt < period
    ) {
      await new Promise((r) => setTimeout(r, 100));
      ended = await statusOf(rerunId);
    }
    expect(["completed", "failed"]).toContain(ended.status);
    if (ended.status === "failed") expect(ended.reason).toBeTruthy();
    expect(await jobRunning()).toBe(0);
    console.log(`rerun ended ${ended.status} ${Date.now() - restartedAt} ms after the restart`);
  }, 120_000);
});
