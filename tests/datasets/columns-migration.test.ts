/**
 * Versions stored before the Arrow columns (a `.cols` file named in `parsed_path`) are migrated:
 * the Arrow file is written, the database points at it, the `.cols` file goes, the original
 * bytes and their SHA-256 stay, and a rerun gives the very result bytes the former store gave.
 * The former store is made the way earlier releases made it: the original file parsed, its
 * cells written with the former writer, `parsed_path` naming that file.
 */
import { existsSync, readdirSync, rmSync, writeFileSync, copyFileSync, readFileSync } from "node:fs";
import { createHash } from "node:crypto";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { demoPrimaryForm } from "../support/demo-forms";
import { useTempDatabase } from "../support/temp-db";

const { dir } = useTempDatabase();
const dataDir = path.join(dir, "data");
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { db, t } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
const catalog = await import("~/.server/datasets/catalog.server");
const reruns = await import("~/.server/reruns/reruns.server");
const { storedResultJson } = await import("~/.server/reruns/result-store.server");
const { runOneJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();
const { canonicalJson } = await import("~/.server/audit.server");
const { parseDatasetFile } = await import("~/.server/datasets/parse.server");
const { readLegacyColumnsFile, writeLegacyColumnsFile } =
  await import("~/.server/datasets/columns-file.server");
const { migrateStoredColumns } = await import("~/.server/datasets/stored-columns.server");
const { columnsRelativePath, legacyColumnsRelativePath } = await import("~/.server/datasets/store.server");
const { eq } = await import("drizzle-orm");

type Actor = { id: string; name: string };
let studyId = "";
let priya: Actor;
let modelId = "";
let versionId = "";
let sha256 = "";

async function person(email: string): Promise<Actor> {
  const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
  return { id: p.id, name: p.displayName };
}

async function version() {
  const [v] = await db.select().from(t.datasetVersions).where(eq(t.datasetVersions.id, versionId));
  return v;
}

/** Turns the store back into the former format: `.cols` from the original file (unless told not to), no Arrow file. */
async function formerStore(opts: { withCols: boolean }): Promise<void> {
  const v = await version();
  const parsed = await parseDatasetFile(path.join(dataDir, v.storedPath), v.fileName, v.format, {
    keyColumns: JSON.parse(v.keyColumnsJson) as string[],
  });
  if (!parsed.ok) throw new Error(parsed.problems.join(" "));
  const cols = legacyColumnsRelativePath(v.sha256);
  if (opts.withCols) await writeLegacyColumnsFile(path.join(dataDir, cols), parsed.dataset);
  rmSync(path.join(dataDir, columnsRelativePath(v.sha256)), { force: true });
  await db.update(t.datasetVersions).set({ parsedPath: cols }).where(eq(t.datasetVersions.id, v.id));
}

async function rerunResult(): Promise<string> {
  const id = await reruns.startRerun(priya, studyId, {
    plannedModelId: modelId,
    datasetVersionId: versionId,
    options: { variant: "planned" },
  });
  while (await runOneJob()) {
    // run every queued job
  }
  const [r] = await db.select().from(t.reruns).where(eq(t.reruns.id, id));
  expect(r.status).toBe("completed");
  return (await storedResultJson(r)) as string;
}

const sha = (file: string) => createHash("sha256").update(readFileSync(file)).digest("hex");

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  studyId = seeded.studyId;
  priya = await person("priya.lindqvist@plumbline.example");
  const tomas = await person("tomas.berg@plumbline.example");
  const locked = (await catalog.listLockedVersions(studyId))[0];
  versionId = locked.versionId;
  sha256 = locked.sha256;
  const { versionId: planVersion } = await plans.createPlan(priya, studyId, {
    title: "Efficacy models",
    sapName: "Statistical analysis plan",
    sapVersion: "2.0",
    sapDate: "2026-10-01",
  });
  const v = validatePlannedModel(
    readPlannedModelForm(demoPrimaryForm()),
    [{ name: locked.datasetName, columns: locked.columns }],
    [],
  );
  if (!v.ok) throw new Error(JSON.stringify(v.errors));
  modelId = await plans.savePlannedModel(priya, studyId, planVersion, 1, null, v.model);
  await plans.submitForApproval(priya, studyId, planVersion, 2);
  await plans.approvePlanVersion({ ...tomas, signedInAt: new Date().toISOString() }, studyId, planVersion);
});

describe("migration of the former columns files", () => {
  it("writes the Arrow file at start-up, keeps the original bytes, and the rerun gives the former result bytes", async () => {
    const arrowResult = await rerunResult();
    await formerStore({ withCols: true });
    const v = await version();
    expect(v.parsedPath).toMatch(/\.cols$/);

    // The result the former store gave: the engine on the cells of the .cols file, as before.
    const cols = await readLegacyColumnsFile(path.join(dataDir, v.parsedPath!));
    const columns: Record<string, string[]> = {};
    cols.names.forEach((name, j) => (columns[name] = cols.cells[j]));
    const model = await plans.getPlannedModel(modelId);
    const formerResult = canonicalJson(
      reruns.computeRerun(
        model,
        { columns, rowNumbers: cols.rowNumbers },
        { variant: "planned" },
        { datasetSha256: v.sha256, planVersionId: model.planVersionId },
      ),
    );

    expect(await migrateStoredColumns()).toEqual({ migrated: 1, failed: [] });
    const after = await version();
    expect(after.parsedPath).toBe(columnsRelativePath(sha256));
    expect(after.sha256).toBe(sha256);
    expect(sha(path.join(dataDir, after.storedPath))).toBe(sha256);
    expect(existsSync(path.join(dataDir, after.parsedPath!))).toBe(true);
    expect(existsSync(path.join(dataDir, legacyColumnsRelativePath(sha256)))).toBe(false);

    const migratedResult = await rerunResult();
    expect(migratedResult).toBe(formerResult);
    expect(migratedResult).toBe(arrowResult);

    // Done is done: a second start-up finds nothing to migrate.
    expect(await migrateStoredColumns()).toEqual({ migrated: 0, failed: [] });
  });

  it("finishes a migration killed between the rename and the database update, leaving no work files", async () => {
    const arrow = path.join(dataDir, columnsRelativePath(sha256));
    const kept = path.join(dir, "kept.arrow");
    copyFileSync(arrow, kept);
    await formerStore({ withCols: true });
    // Killed after the rename: the Arrow file is in place, the database still names the .cols file,
    // and a dead process's half-written work file is left in tmp/.
    copyFileSync(kept, arrow);
    const tmp = path.join(dataDir, "datasets", "tmp");
    writeFileSync(path.join(tmp, "999999999-1-dead.arrow"), "ARROW1");
    expect(await migrateStoredColumns()).toEqual({ migrated: 1, failed: [] });
    expect((await version()).parsedPath).toBe(columnsRelativePath(sha256));
    expect(existsSync(path.join(dataDir, legacyColumnsRelativePath(sha256)))).toBe(false);
    expect(readFileSync(arrow)).toEqual(readFileSync(kept));
    rmSync(path.join(tmp, "999999999-1-dead.arrow"));
    expect(readdirSync(tmp)).toEqual([]);
  });

  it("rebuilds from the original bytes when the .cols file is gone, on the first read, with typed columns", async () => {
    const before = await rerunResult();
    await formerStore({ withCols: false });
    const locked = await catalog.loadLockedTable(versionId);
    expect((await version()).parsedPath).toBe(columnsRelativePath(sha256));
    expect(locked.typed.columns.chg).toBeInstanceOf(Float64Array);
    expect(locked.typed.columns.subjid[0]).toBe("QMT301-0001");
    expect(await rerunResult()).toBe(before);
  });

  it("rebuilds an Arrow file that has gone missing from the store on the next read", async () => {
    const arrow = path.join(dataDir, columnsRelativePath(sha256));
    const kept = readFileSync(arrow);
    rmSync(arrow);
    const locked = await catalog.loadLockedTable(versionId);
    expect(locked.table.columns.subjid[0]).toBe("QMT301-0001");
    expect(readFileSync(arrow)).toEqual(kept);
  });

  it("refuses to rebuild from original bytes that no longer match their SHA-256, and says so", async () => {
    await formerStore({ withCols: false });
    const v = await version();
    const original = path.join(dataDir, v.storedPath);
    const bytes = readFileSync(original);
    writeFileSync(original, Buffer.concat([bytes, Buffer.from("\n")]));
    try {
      const outcome = await migrateStoredColumns();
      expect(outcome.migrated).toBe(0);
      expect(outcome.failed[0]).toMatch(/no longer matches its SHA-256/);
      expect((await version()).parsedPath).toMatch(/\.cols$/);
    } finally {
      writeFileSync(original, bytes);
    }
    expect(await migrateStoredColumns()).toEqual({ migrated: 1, failed: [] });
  });
});
