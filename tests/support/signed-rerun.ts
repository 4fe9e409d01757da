/**
 * A signed primary rerun of the demo study made through the services, for server tests that
 * need signed results (the appendix, reports): seed, plan with its checks and sensitivity
 * analyses, two-person approval, rerun and its planned sensitivity analyses as background jobs,
 * every finding assessed, and sign-off by a second biostatistician. Call `useTempDatabase()`
 * first (this module imports the app's server modules only when called).
 */

import { demoPrimaryForm } from "./demo-forms";
export interface SignedRerun {
  studyId: string;
  planVersionId: string;
  plannedModelId: string;
  datasetVersionId: string;
  rerunId: string;
  sensitivityIds: string[];
  people: Record<"priya" | "tomas" | "helen" | "sam", { id: string; name: string }>;
}

export async function makeSignedRerun(): Promise<SignedRerun> {
  const { seedDemoStudy } = await import("~/.server/demo/seed.server");
  const { db, t } = await import("~/.server/db/index.server");
  const plans = await import("~/.server/plans/plans.server");
  const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
  const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
  const reruns = await import("~/.server/reruns/reruns.server");
  const findings = await import("~/.server/reruns/findings.server");
  const { runOneJob } = await import("~/.server/jobs/jobs.server");
  (await import("~/.server/background.server")).registerJobHandlers();
  const { eq } = await import("drizzle-orm");

  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("The demo study could not be seeded into the test database.");
  const studyId = seeded.studyId;
  const person = async (email: string) => {
    const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
    if (!p) throw new Error(`No demo person ${email}`);
    return { id: p.id, name: p.displayName };
  };
  const people = {
    priya: await person("priya.lindqvist@plumbline.example"),
    tomas: await person("tomas.berg@plumbline.example"),
    helen: await person("helen.achter@plumbline.example"),
    sam: await person("sam.quill@quillmoor.example"),
  };
  const drain = async () => {
    while (await runOneJob()) {
      // run every queued job
    }
  };
  const locked = await listLockedVersions(studyId);
  const datasetVersionId = locked[0].versionId;
  const { versionId } = await plans.createPlan(people.priya, studyId, {
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
  if (!v.ok) throw new Error(`The planned model does not validate: ${JSON.stringify(v.errors)}`);
  const plannedModelId = await plans.savePlannedModel(people.priya, studyId, versionId, 1, null, v.model);
  await plans.submitForApproval(people.priya, studyId, versionId, 2);
  await plans.approvePlanVersion(
    { ...people.tomas, signedInAt: new Date().toISOString() },
    studyId,
    versionId,
  );

  const rerunId = await reruns.startRerun(people.priya, studyId, {
    plannedModelId,
    datasetVersionId,
    options: { variant: "planned" },
  });
  await drain();
  const primary = await reruns.getRerun(studyId, rerunId);
  if (primary.rerun.status !== "completed" || !primary.doc)
    throw new Error(`The primary rerun did not complete: ${primary.rerun.failureReason}`);
  // the plan's sensitivity analyses were queued when the primary completed, and ran in the same drain
  const sensitivityIds = (await reruns.sensitivityReruns(rerunId)).map((r) => r.id);
  if (sensitivityIds.length === 0)
    throw new Error("The planned sensitivity analyses were not queued with the primary rerun.");
  for (const f of await findings.findingsOf(rerunId)) {
    await findings.assessFinding(people.priya, studyId, f.id, {
      category: "model_assumption",
      impact: "none",
      action: "planned_sensitivity",
      rationale: "The planned sensitivity analyses leave the treatment conclusion unchanged.",
    });
  }
  await findings.signRerun({ ...people.tomas, signedInAt: new Date().toISOString() }, studyId, rerunId);
  return {
    studyId,
    planVersionId: versionId,
    plannedModelId,
    datasetVersionId,
    rerunId,
    sensitivityIds,
    people,
  };
}
