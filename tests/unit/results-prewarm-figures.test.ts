/**
 * A rerun's results page is made ready when the rerun completes (results-prewarm.server.ts): by
 * the time the rerun shows as completed, every figure answer of the registry's list is kept for
 * both kinds of viewer and the what-if's inputs for the biostatistician, so the first reader
 * waits for none of them; the answers kept for a viewer without subjects name none. Through the
 * services on a real SQLite file with the seeded demo study. The answers' numbers are the figure
 * modules' own, checked against R in the other tests/unit/*figure* files; this checks only that
 * they are made once, ahead.
 */
import { beforeAll, describe, expect, it } from "vitest";
import { demoPrimaryForm } from "../support/demo-forms";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { db, t } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
const reruns = await import("~/.server/reruns/reruns.server");
const { figureAnswer } = await import("~/.server/reruns/figure-answers.server");
const { keptOrBuilt } = await import("~/.server/reruns/what-if.server");
const { figureListOf } = await import("~/figures/registry");
const { runOneJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();
const { eq } = await import("drizzle-orm");

let studyId = "";
let rerunId = "";

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  studyId = seeded.studyId;
  const person = async (email: string) => {
    const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
    return { id: p.id, name: p.displayName };
  };
  const priya = await person("priya.lindqvist@plumbline.example");
  const tomas = await person("tomas.berg@plumbline.example");
  const locked = await listLockedVersions(studyId);
  const { versionId } = await plans.createPlan(priya, studyId, {
    title: "Efficacy models",
    sapName: "Statistical analysis plan",
    sapVersion: "2.0",
    sapDate: "2026-10-01",
  });
  const v = validatePlannedModel(
    readPlannedModelForm(demoPrimaryForm({ sensitivity: false })),
    locked.map((x) => ({ name: x.datasetName, columns: x.columns })),
    [],
  );
  if (!v.ok) throw new Error(JSON.stringify(v.errors));
  const modelId = await plans.savePlannedModel(priya, studyId, versionId, 1, null, v.model);
  await plans.submitForApproval(priya, studyId, versionId, 2);
  await plans.approvePlanVersion({ ...tomas, signedInAt: new Date().toISOString() }, studyId, versionId);
  rerunId = await reruns.startRerun(priya, studyId, {
    plannedModelId: modelId,
    datasetVersionId: locked[0].versionId,
    options: { variant: "planned" },
  });
  while (await runOneJob()) {
    // the rerun (and any mail)
  }
});

const notMadeAgain = () => Promise.reject(new Error("made again: it was not kept when the rerun completed"));

describe("a completed rerun's results page, made ready ahead", () => {
  it("keeps every figure answer for both kinds of viewer; the one without subjects names none", async () => {
    const { rerun, doc } = await reruns.getRerun(studyId, rerunId);
    expect(rerun.status).toBe("completed");
    const list = figureListOf(doc!);
    expect(list.length).toBeGreaterThan(5);
    const ids = doc!.result.observations.id.filter((id): id is string => Boolean(id));
    expect(ids.length).toBeGreaterThan(100);
    for (const f of list)
      for (const withSubjectIds of [true, false]) {
        // a table asked for means the answer was made now rather than kept
        const body = await figureAnswer(
          { rerunId, resultSha256: rerun.resultSha256, figure: f.figure, term: f.term, withSubjectIds },
          doc!,
          notMadeAgain,
        );
        const answer = JSON.parse(body) as { spec: unknown; data: { rows: unknown[] } };
        expect(answer.spec).toBeTruthy();
        if (!withSubjectIds) for (const id of ids) expect(body.includes(`"${id}"`)).toBe(false);
      }
  });

  it("keeps the what-if's inputs for the biostatistician", async () => {
    const { rerun } = await reruns.getRerun(studyId, rerunId);
    const inputs = await keptOrBuilt(
      rerun,
      { prespecifiedExclusion: false, withSubjectIds: true, canSave: true },
      () => notMadeAgain(),
    );
    expect(inputs.available).toBe(true);
  });
});
