/**
 * Reruns that cannot run are never left queued or running: invalid input (a what-if exclusion
 * of row 0 or of a row that does not exist) is refused before anything is queued, with a
 * message naming the row; and a rerun whose job fails for a reason other than the engine's
 * (here options stored invalid, as a job queued by an older server could hold) ends failed with
 * the reason its results page shows.
 */
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import { makeSignedRerun, type SignedRerun } from "../support/signed-rerun";

useTempDatabase();
const { db, dbClient, t, writeTransaction, newId } = await import("~/.server/db/index.server");
const reruns = await import("~/.server/reruns/reruns.server");
const { runOneJob, enqueueJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();
const { eq } = await import("drizzle-orm");

let s: SignedRerun;
beforeAll(async () => {
  s = await makeSignedRerun();
}, 120_000);

const count = async (sql: string) => Number((await dbClient.execute(sql)).rows[0].n);
const refusal = (e: unknown) => {
  const d = e as { init?: { status?: number }; data?: { message?: string } };
  return { status: d.init?.status, message: d.data?.message };
};

describe("a what-if exclusion", () => {
  for (const row of [0, 999_999]) {
    it(`of row ${row} is refused before queuing, naming the row`, async () => {
      const before = {
        reruns: await count("SELECT count(*) AS n FROM reruns"),
        jobs: await count("SELECT count(*) AS n FROM jobs"),
      };
      const err = await reruns
        .startRerun(s.people.priya, s.studyId, {
          plannedModelId: s.plannedModelId,
          datasetVersionId: s.datasetVersionId,
          options: {
            variant: "exclude_rows",
            rows: [row],
            reason: "chosen in the what-if, not pre-specified",
          },
          parentRerunId: s.rerunId,
          prespecified: false,
        })
        .then(
          () => null,
          (e: unknown) => e,
        );
      expect(err).not.toBeNull();
      const r = refusal(err);
      expect(r.status).toBe(400);
      expect(r.message).toMatch(
        row === 0
          ? /^The rerun's options are not valid \(rows\.0: .*\)\. Nothing was started\.$/
          : /^Row 999999 is not one of the \d+ subjects this rerun analysed .*Nothing was started\.$/,
      );
      expect(await count("SELECT count(*) AS n FROM reruns")).toBe(before.reruns);
      expect(await count("SELECT count(*) AS n FROM jobs")).toBe(before.jobs);
      expect(
        await count(
          "SELECT count(*) AS n FROM reruns WHERE label LIKE 'Excluding 1 subject %' AND status <> 'completed'",
        ),
      ).toBe(0);
    });
  }

  it("of subjects the rerun analysed is queued and labelled by their number", async () => {
    const doc = (await reruns.getRerun(s.studyId, s.rerunId)).doc!;
    const rows = doc.result.observations.row.slice(0, 2);
    const id = await reruns.startRerun(s.people.priya, s.studyId, {
      plannedModelId: s.plannedModelId,
      datasetVersionId: s.datasetVersionId,
      options: { variant: "exclude_rows", rows, reason: "chosen in the what-if, not pre-specified" },
      parentRerunId: s.rerunId,
      prespecified: false,
    });
    while (await runOneJob()) {
      // run it
    }
    const done = await reruns.getRerun(s.studyId, id);
    expect(done.rerun.label).toBe("Excluding 2 subjects (chosen in the what-if, not pre-specified)");
    expect(done.rerun.status).toBe("completed");
    expect(done.doc?.rows.excludedByOption).toBe(2);
  });
});

describe("a rerun whose job fails outside the engine", () => {
  it("ends failed with the reason, not running", async () => {
    const id = newId();
    // Options no server of this version would queue: the job must still end the rerun.
    await writeTransaction(async (tx) => {
      const [primary] = await tx.select().from(t.reruns).where(eq(t.reruns.id, s.rerunId));
      await tx.insert(t.reruns).values({
        id,
        studyId: s.studyId,
        plannedModelId: primary.plannedModelId,
        planVersionId: primary.planVersionId,
        datasetVersionId: primary.datasetVersionId,
        kind: "sensitivity",
        sensitivityKey: "exclude_rows",
        parentRerunId: s.rerunId,
        prespecified: false,
        optionsJson: JSON.stringify({ variant: "exclude_rows", rows: [0], reason: "old" }),
        label: "Excluding 1 subject (old)",
        datasetSha256: primary.datasetSha256,
        startedBy: s.people.priya.id,
      });
      await enqueueJob(tx, reruns.RERUN_JOB, { rerunId: id });
    });
    while (await runOneJob()) {
      // run it
    }
    const [row] = await db.select().from(t.reruns).where(eq(t.reruns.id, id));
    expect(row.status).toBe("failed");
    expect(row.failureReason).toMatch(
      /^The rerun could not be completed: its options are not valid \(rows\.0: /,
    );
    // The results page reads the rerun through getRerun and shows failureReason when it failed.
    expect((await reruns.getRerun(s.studyId, id)).rerun.failureReason).toBe(row.failureReason);
    expect(
      await count(
        `SELECT count(*) AS n FROM audit_events WHERE action = 'rerun.fail' AND entity_id = '${id}'`,
      ),
    ).toBe(1);
  });
});
