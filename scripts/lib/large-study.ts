/**
 * The study the rerun and figure benchmarks measure, built through the real services on a
 * temporary SQLite file: the demo study, plus a locked dataset "adeff10k" of 10 000 invented
 * subjects (the demo generator run with consecutive seeds), and an approved plan with the
 * primary model on both datasets. Call `useTempDataDir()` before `buildLargeStudy()`: the
 * database module reads DATABASE_URL and DATA_DIR when it first loads.
 */
import { mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { PersonActor } from "../../app/.server/people.server";

export interface TempDataDir {
  dir: string;
  dbFile: string;
  dataDir: string;
  remove(): void;
}

/** A fresh temporary folder for the database and stored files, set in this process's environment. */
export function useTempDataDir(prefix = "plumbline-bench-"): TempDataDir {
  const dir = mkdtempSync(path.join(os.tmpdir(), prefix));
  const dbFile = path.join(dir, "bench.db");
  const dataDir = path.join(dir, "data");
  process.env.DATABASE_URL = `file:${dbFile}`;
  process.env.DATA_DIR = dataDir;
  return { dir, dbFile, dataDir, remove: () => rmSync(dir, { recursive: true, force: true }) };
}

/** The demo dataset (450 subjects) and the large one. */
export const BENCH_DATASETS = ["adeff", "adeff10k"] as const;
export type BenchDataset = (typeof BENCH_DATASETS)[number];

export interface LargeStudy {
  studyId: string;
  people: Record<"dana" | "priya" | "tomas", PersonActor>;
  datasetVersionIds: Record<BenchDataset, string>;
  plannedModelIds: Record<BenchDataset, string>;
  /** Starts the planned primary rerun on a dataset, runs the queued jobs and returns the rerun's id. */
  rerun(name: BenchDataset): Promise<string>;
}

/** The primary model's variables, as the plan states them. */
const RESPONSE = "chg";
const TREATMENT = "arm";
const COVARIATES = ["base", "stratum", "region", "sex", "age"];
const CHECKS = [
  "cooks_distance",
  "leverage",
  "deletion_residual",
  "dfbetas_treatment",
  "dffits",
  "shapiro_wilk",
  "breusch_pagan",
  "brown_forsythe",
  "homogeneity_of_slopes",
  "reset",
  "gvif",
];

export interface LargeStudyOptions {
  /** Subjects in the large dataset (10 000 unless told otherwise). */
  subjects?: number;
  /**
   * Keep only subjects in the full analysis set with every model variable recorded, so that the
   * rerun analyses all of them (n used = subjects). Otherwise the dataset keeps the demo's
   * proportion of subjects outside the analysis set or with missing values.
   */
  analysedOnly?: boolean;
}

export async function buildLargeStudy(opts: LargeStudyOptions = {}): Promise<LargeStudy> {
  const subjects = opts.subjects ?? 10_000;
  const { seedDemoStudy } = await import("../../app/.server/demo/seed.server");
  const { generateDemoDataset } = await import("../../app/.server/demo/demo-dataset");
  const { db, t } = await import("../../app/.server/db/index.server");
  const { eq } = await import("drizzle-orm");
  const datasets = await import("../../app/.server/datasets/datasets.server");
  const { listLockedVersions } = await import("../../app/.server/datasets/catalog.server");
  const plans = await import("../../app/.server/plans/plans.server");
  const { readPlannedModelForm, validatePlannedModel } =
    await import("../../app/.server/plans/planned-model");
  const reruns = await import("../../app/.server/reruns/reruns.server");
  const { runOneJob } = await import("../../app/.server/jobs/jobs.server");
  (await import("../../app/.server/background.server")).registerJobHandlers();

  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error(`The demo study could not be seeded: ${seeded.reason}`);
  const studyId = seeded.studyId;
  const person = async (email: string): Promise<PersonActor> => {
    const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
    if (!p) throw new Error(`No demo person ${email}: check idp-fake/demo-people.json`);
    return { id: p.id, name: p.displayName };
  };
  const people = {
    dana: await person("dana.okafor@plumbline.example"),
    priya: await person("priya.lindqvist@plumbline.example"),
    tomas: await person("tomas.berg@plumbline.example"),
  };

  /** The demo generator run with consecutive seeds until there are enough rows, ids made unique. */
  const largeCsv = (target: number): string => {
    const first = generateDemoDataset(1);
    const lines = [first.columns.join(",")];
    const q = (v: string) => (/[",\n]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v);
    const analysed = (row: Record<string, string>) =>
      row.fasfl === "Y" && [RESPONSE, TREATMENT, ...COVARIATES].every((c) => row[c] !== "");
    for (let seed = 1; lines.length - 1 < target; seed++) {
      for (const row of generateDemoDataset(seed).rows) {
        if (lines.length - 1 >= target) break;
        if (opts.analysedOnly && !analysed(row)) continue;
        lines.push(first.columns.map((c) => q(c === "subjid" ? `S${seed}-${row[c]}` : row[c])).join(","));
      }
    }
    return `${lines.join("\n")}\n`;
  };

  const up = await datasets.uploadBytes(people.dana, {
    studyId,
    datasetName: "adeff10k",
    fileName: "adeff10k.csv",
    bytes: largeCsv(subjects),
  });
  if (!up.ok) throw new Error(`The large dataset was refused: ${up.problems.join(" ")}`);
  const detail = await datasets.getVersionDetail(studyId, up.versionId);
  for (const hit of detail?.hits ?? [])
    await datasets.recordNotIdentifier(
      people.dana,
      studyId,
      hit.id,
      "Pseudonymous subject code for the benchmark.",
    );
  const locked = await datasets.lockVersion(
    { ...people.dana, signedInAt: new Date().toISOString() },
    studyId,
    up.versionId,
  );
  if (!locked.ok) throw new Error(`The large dataset could not be locked: ${locked.message}`);

  const versions = await listLockedVersions(studyId);
  const versionOf = (name: BenchDataset): string => {
    const v = versions.find((x) => x.datasetName === name);
    if (!v) throw new Error(`No locked dataset ${name} in the benchmark study`);
    return v.versionId;
  };
  const datasetVersionIds = { adeff: versionOf("adeff"), adeff10k: versionOf("adeff10k") };

  const catalogue = versions.map((v) => ({ name: v.datasetName, columns: v.columns }));
  const { versionId } = await plans.createPlan(people.priya, studyId, {
    title: "Benchmark",
    sapName: "SAP",
    sapVersion: "1",
    sapDate: "2026-12-01",
  });
  let revision = 1;
  const plannedModelIds = { adeff: "", adeff10k: "" };
  for (const name of BENCH_DATASETS) {
    const f = new FormData();
    for (const [k, v] of Object.entries({
      key: name,
      title: `Primary on ${name}`,
      datasetName: name,
      populationColumn: "fasfl",
      populationValue: "Y",
      response: RESPONSE,
      family: "gaussian",
      treatment: TREATMENT,
      treatmentReference: "Placebo",
      id: "subjid",
    }))
      f.set(k, v);
    for (const c of COVARIATES) f.append("covariate", c);
    for (const c of CHECKS) f.set(`check:${c}:enabled`, "on");
    const v = validatePlannedModel(readPlannedModelForm(f), catalogue, []);
    if (!v.ok)
      throw new Error(`The benchmark's planned model does not validate: ${JSON.stringify(v.errors)}`);
    plannedModelIds[name] = await plans.savePlannedModel(
      people.priya,
      studyId,
      versionId,
      revision++,
      null,
      v.model,
    );
  }
  await plans.submitForApproval(people.priya, studyId, versionId, revision);
  await plans.approvePlanVersion(
    { ...people.tomas, signedInAt: new Date().toISOString() },
    studyId,
    versionId,
  );

  const rerun = async (name: BenchDataset): Promise<string> => {
    const id = await reruns.startRerun(people.priya, studyId, {
      plannedModelId: plannedModelIds[name],
      datasetVersionId: datasetVersionIds[name],
      options: { variant: "planned" },
    });
    while (await runOneJob()) {
      // run every queued job
    }
    return id;
  };
  return { studyId, people, datasetVersionIds, plannedModelIds, rerun };
}
