/**
 * `npm run bench:reruns`: how long a rerun takes from queue to stored result, for the demo
 * study's primary model (450 subjects) and for the same model on 10 000 subjects, and how long
 * building each figure's data takes at 10 000. Runs the real services on a temporary SQLite
 * file. Prints figures; asserts nothing.
 */
import { mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";

const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-bench-"));
process.env.DATABASE_URL = `file:${path.join(dir, "bench.db")}`;
process.env.DATA_DIR = path.join(dir, "data");

const { seedDemoStudy } = await import("../app/.server/demo/seed.server");
const { generateDemoDataset } = await import("../app/.server/demo/demo-dataset");
const { db, t } = await import("../app/.server/db/index.server");
const { eq } = await import("drizzle-orm");
const datasets = await import("../app/.server/datasets/datasets.server");
const { listLockedVersions } = await import("../app/.server/datasets/catalog.server");
const plans = await import("../app/.server/plans/plans.server");
const { readPlannedModelForm, validatePlannedModel } = await import("../app/.server/plans/planned-model");
const reruns = await import("../app/.server/reruns/reruns.server");
const { runOneJob } = await import("../app/.server/jobs/jobs.server");

const seeded = await seedDemoStudy();
if (!seeded.seeded) throw new Error(seeded.reason);
const studyId = seeded.studyId;
const person = async (email: string) => {
  const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
  return { id: p.id, name: p.displayName };
};
const dana = await person("dana.okafor@plumbline.example");
const priya = await person("priya.lindqvist@plumbline.example");
const tomas = await person("tomas.berg@plumbline.example");

/** About 10 000 invented subjects: the demo generator run with consecutive seeds, ids made unique. */
function largeCsv(target: number): string {
  const first = generateDemoDataset(1);
  const lines = [first.columns.join(",")];
  const q = (v: string) => (/[",\n]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v);
  for (let seed = 1; lines.length - 1 < target; seed++) {
    for (const row of generateDemoDataset(seed).rows) {
      if (lines.length - 1 >= target) break;
      lines.push(first.columns.map((c) => q(c === "subjid" ? `S${seed}-${row[c]}` : row[c])).join(","));
    }
  }
  return `${lines.join("\n")}\n`;
}

const up = await datasets.uploadBytes(dana, { studyId, datasetName: "adeff10k", fileName: "adeff10k.csv", bytes: largeCsv(10_000) });
if (!up.ok) throw new Error(up.problems.join(" "));
const detail = await datasets.getVersionDetail(studyId, up.versionId);
for (const hit of detail?.hits ?? []) await datasets.recordNotIdentifier(dana, studyId, hit.id, "Pseudonymous subject code for the benchmark.");
const locked = await datasets.lockVersion(dana, studyId, up.versionId);
if (!locked.ok) throw new Error(locked.message);

const versions = await listLockedVersions(studyId);
const catalogue = versions.map((v) => ({ name: v.datasetName, columns: v.columns }));
const { versionId } = await plans.createPlan(priya, studyId, { title: "Benchmark", sapName: "SAP", sapVersion: "1", sapDate: "2026-12-01" });
let revision = 1;
const modelIds: Record<string, string> = {};
for (const name of ["adeff", "adeff10k"]) {
  const f = new FormData();
  for (const [k, v] of Object.entries({ key: name, title: `Primary on ${name}`, datasetName: name, populationColumn: "fasfl", populationValue: "Y", response: "chg", family: "gaussian", treatment: "arm", treatmentReference: "Placebo", id: "subjid" })) f.set(k, v);
  for (const c of ["base", "stratum", "region", "sex", "age"]) f.append("covariate", c);
  for (const c of ["cooks_distance", "leverage", "deletion_residual", "dfbetas_treatment", "dffits", "shapiro_wilk", "breusch_pagan", "brown_forsythe", "homogeneity_of_slopes", "reset", "gvif"]) f.set(`check:${c}:enabled`, "on");
  const v = validatePlannedModel(readPlannedModelForm(f), catalogue, []);
  if (!v.ok) throw new Error(JSON.stringify(v.errors));
  modelIds[name] = await plans.savePlannedModel(priya, studyId, versionId, revision++, null, v.model);
}
await plans.submitForApproval(priya, studyId, versionId, revision);
await plans.approvePlanVersion(tomas, studyId, versionId);

const results: string[] = [];
for (const name of ["adeff", "adeff10k"]) {
  const dv = versions.find((v) => v.datasetName === name)!;
  const times: number[] = [];
  let id = "";
  for (let i = 0; i < 3; i++) {
    const start = performance.now();
    id = await reruns.startRerun(priya, studyId, { plannedModelId: modelIds[name], datasetVersionId: dv.versionId, options: { variant: "planned" } });
    while (await runOneJob()) {
      // drain
    }
    times.push(performance.now() - start);
  }
  const r = await reruns.getRerun(studyId, id);
  results.push(`${name.padEnd(9)} n used ${String(r.doc?.rows.used).padStart(6)}   queue to stored result: ${times.map((x) => `${x.toFixed(0)} ms`).join(", ")} (3 runs)   result JSON ${(r.rerun.resultJson!.length / 1e6).toFixed(2)} MB`);
  if (name === "adeff10k") {
    try {
      const { figureData } = await import("../app/.server/reruns/figure-data.server");
      const { rerunTable } = await import("../app/.server/reruns/what-if.server");
      const { loadLockedTable } = await import("../app/.server/datasets/catalog.server");
      const table = rerunTable(r.doc!, (await loadLockedTable(dv.versionId)).table);
      for (const fig of ["influence", "leverage_residual", "qq", "residuals_fitted", "spread_by_arm", "residuals_covariate", "partial_residuals"] as const) {
        const s = performance.now();
        const data = figureData(r.doc!, fig, { term: "base", withSubjectIds: true, table });
        results.push(`  figure data ${fig.padEnd(20)} ${(performance.now() - s).toFixed(1)} ms, ${(JSON.stringify(data).length / 1e6).toFixed(2)} MB`);
      }
    } catch (e) {
      results.push(`  figure data: not measured (${e instanceof Error ? e.message : e})`);
    }
  }
}
console.log(`Plumbline rerun benchmark (${os.cpus().length} cores, Node ${process.version})\n${results.join("\n")}`);
rmSync(dir, { recursive: true, force: true });
process.exit(0);
