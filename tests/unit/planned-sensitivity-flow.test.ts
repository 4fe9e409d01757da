/**
 * The plan's sensitivity analyses run with the primary rerun: when the primary completes, each
 * planned analysis that applies to the model's family is queued as a rerun and job of its own
 * (audited), runs in the background, and sits beside the primary. A what-if exclusion that is
 * not pre-specified is never queued by itself. Through the services on a real SQLite file with
 * the seeded demo study. The robust analysis's treatment contrast is compared with the primary's
 * HC3 interval, itself checked against R's sandwich::vcovHC in tests/reference.
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
const { reportedContrasts, contrastsOf } = await import("~/.server/reruns/rerun-view.server");
const { runOneJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();
const { eq } = await import("drizzle-orm");

let studyId = "";
let primaryId = "";
let priya = { id: "", name: "" };

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  studyId = seeded.studyId;
  const person = async (email: string) => {
    const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
    return { id: p.id, name: p.displayName };
  };
  priya = await person("priya.lindqvist@plumbline.example");
  const tomas = await person("tomas.berg@plumbline.example");
  const locked = await listLockedVersions(studyId);
  const { versionId } = await plans.createPlan(priya, studyId, {
    title: "Efficacy models",
    sapName: "Statistical analysis plan",
    sapVersion: "2.0",
    sapDate: "2026-10-01",
  });
  const v = validatePlannedModel(
    readPlannedModelForm(demoPrimaryForm()),
    locked.map((x) => ({ name: x.datasetName, columns: x.columns })),
    [],
  );
  if (!v.ok) throw new Error(JSON.stringify(v.errors));
  const modelId = await plans.savePlannedModel(priya, studyId, versionId, 1, null, v.model);
  await plans.submitForApproval(priya, studyId, versionId, 2);
  await plans.approvePlanVersion({ ...tomas, signedInAt: new Date().toISOString() }, studyId, versionId);
  primaryId = await reruns.startRerun(priya, studyId, {
    plannedModelId: modelId,
    datasetVersionId: locked[0].versionId,
    options: { variant: "planned" },
  });
});

describe("planned sensitivity analyses", () => {
  it("are not queued before the primary has completed", async () => {
    expect(await reruns.sensitivityReruns(primaryId)).toHaveLength(0);
    // one job at a time (others, such as e-mail, may be queued before it) until the primary has completed
    while ((await reruns.getRerun(studyId, primaryId)).rerun.status !== "completed")
      expect(await runOneJob()).toBe(true);
    const queued = await reruns.sensitivityReruns(primaryId);
    expect(queued.map((r) => r.status)).toEqual(["queued", "queued", "queued"]);
  });

  it("are queued, in the plan's order, as pre-specified reruns of their own with a job and an audit event each", async () => {
    const queued = await reruns.sensitivityReruns(primaryId);
    expect(queued.map((r) => JSON.parse(r.optionsJson).variant)).toEqual([
      "robust_hc3",
      "variance_function",
      "exclude_rows",
    ]);
    expect(queued.every((r) => r.prespecified && r.kind === "sensitivity" && r.startedBy === priya.id)).toBe(
      true,
    );
    const exclusion = JSON.parse(queued[2].optionsJson) as { rows: number[]; reason: string };
    const primary = (await reruns.getRerun(studyId, primaryId)).doc!;
    expect(exclusion.rows).toEqual(
      primary.checks
        .find((c) => c.key === "cooks_distance")!
        .flagged!.map((f) => f.row)
        .sort((a, b) => a - b),
    );
    expect(exclusion.reason).toBe("flagged by the Cook's distance check");
    const jobs = await db.select().from(t.jobs);
    for (const r of queued) expect(jobs.some((j) => j.payloadJson.includes(r.id))).toBe(true);
    const audits = await db.select().from(t.auditEvents).where(eq(t.auditEvents.action, "rerun.start"));
    for (const r of queued) expect(audits.find((a) => a.entityId === r.id)?.afterJson).toContain(primaryId);
  });

  it("run in the background and report the contrast beside the primary (the robust one with the HC3 interval)", async () => {
    while (await runOneJob()) {
      // run the queued sensitivity analyses
    }
    const done = await reruns.sensitivityReruns(primaryId);
    expect(done.map((r) => r.status)).toEqual(["completed", "completed", "completed"]);
    const primary = (await reruns.getRerun(studyId, primaryId)).doc!;
    const robust = (await reruns.storedRerunDocument(done[0]))!;
    const hc3 = contrastsOf(primary).map((c) => c.hc3!);
    reportedContrasts(robust).forEach((c, i) => {
      expect(c.lower).toBeCloseTo(hc3[i].lower, 10);
      expect(c.upper).toBeCloseTo(hc3[i].upper, 10);
    });
  });

  it("are queued again with a new primary, never for a sensitivity rerun itself", async () => {
    const again = await reruns.getRerun(studyId, primaryId);
    const secondId = await reruns.startRerun(priya, studyId, {
      plannedModelId: again.rerun.plannedModelId,
      datasetVersionId: again.rerun.datasetVersionId,
      options: { variant: "planned" },
    });
    while (await runOneJob()) {
      // the second primary and its analyses
    }
    expect(await reruns.sensitivityReruns(secondId)).toHaveLength(3);
    for (const r of await reruns.sensitivityReruns(primaryId))
      expect(await reruns.sensitivityReruns(r.id)).toHaveLength(0);
  });
});
