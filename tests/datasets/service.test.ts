/**
 * The datasets service on a real database and data folder: upload, screen decisions, column
 * removal into a derived version, lock, the next version's change summary, and the catalog
 * the reruns read.
 */
import { existsSync, readdirSync } from "node:fs";
import { createHash } from "node:crypto";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

const { dir } = useTempDatabase();
const { db, t, dbClient } = await import("~/.server/db/index.server");
const svc = await import("~/.server/datasets/datasets.server");
const catalog = await import("~/.server/datasets/catalog.server");
const { seedDemoDataset } = await import("~/.server/datasets/demo-seed.server");
const { demoDatasetCsv } = await import("~/.server/demo/demo-dataset");

const studyId = "study-1";
const dana = { id: "p-dana", name: "Dana Okafor" };

beforeAll(async () => {
  await db.insert(t.people).values([
    { id: dana.id, email: "dana.okafor@plumbline.example", displayName: dana.name, externalId: "dana" },
  ]);
  await db.insert(t.studies).values({ id: studyId, code: "T-1", title: "Test study", sponsor: "Test sponsor" });
});

const csv = (lines: string[]) => lines.join("\n") + "\n";

describe("demo dataset", () => {
  it("is uploaded, screened with a recorded rationale and locked as adeff version 1", async () => {
    const { versionId, sha256 } = await seedDemoDataset(studyId);
    expect(sha256).toBe(createHash("sha256").update(demoDatasetCsv()).digest("hex"));
    const locked = await catalog.listLockedVersions(studyId);
    expect(locked).toHaveLength(1);
    expect(locked[0]).toMatchObject({ datasetName: "adeff", version: 1, versionId, rowCount: 450, sha256 });
    const subj = locked[0].columns.find((c) => c.name === "subjid");
    expect(subj).toMatchObject({ type: "text", nonMissing: 450, missing: 0 });
    expect(locked[0].columns.find((c) => c.name === "arm")?.levels?.length).toBe(3);
    const { table } = await catalog.loadLockedTable(versionId);
    expect(table.columns.subjid[0]).toBe("QMT301-0001");
    expect(table.rowNumbers.slice(0, 3)).toEqual([1, 2, 3]);
    expect(Object.keys(table.columns)).toHaveLength(14);
    const events = await dbClient.execute("SELECT action FROM audit_events WHERE study_id = 'study-1' ORDER BY seq");
    expect(events.rows.map((r) => r.action)).toEqual(["dataset.upload", "dataset.screen_decision", "dataset.lock"]);
  });

  it("serves preview windows from the typed columns: numbers sorted as numbers, missing cells last", async () => {
    const [v] = await catalog.listLockedVersions(studyId);
    const chgMissing = v.columns.find((c) => c.name === "chg")?.missing ?? 0;
    expect(chgMissing).toBeGreaterThan(0);
    const w = await svc.readRowsWindow(studyId, v.versionId, { offset: 0, limit: 1000, sort: { column: "chg", descending: false } });
    if (!w) throw new Error("no window");
    const chg = w.rows.map((r) => r[w.columns.indexOf("chg")]);
    expect(chg).toHaveLength(450);
    expect(chg.slice(450 - chgMissing)).toEqual(Array(chgMissing).fill(""));
    const values = chg.slice(0, 450 - chgMissing).map(Number);
    expect(values.every((x, i) => Number.isFinite(x) && (i === 0 || values[i - 1] <= x))).toBe(true);
    // The same cells as the original file, in the order of a numeric (not a text) sort.
    const file = demoDatasetCsv().split("\n").filter(Boolean).map((l) => l.split(","));
    const at = file[0].indexOf("chg");
    const fromFile = file.slice(1).map((r) => r[at]).filter((c) => c !== "" && c !== "NA").map(Number).sort((a, b) => a - b);
    expect(values).toEqual(fromFile);
    const byArm = await svc.readRowsWindow(studyId, v.versionId, { offset: 0, limit: 3, sort: { column: "arm", descending: true } });
    expect(byArm?.rows.map((r) => r[byArm.columns.indexOf("arm")])).toEqual(Array(3).fill("Placebo"));
  });

  it("refuses the same bytes again, naming the version", async () => {
    const again = await svc.uploadBytes(dana, { studyId, datasetName: "adeff", fileName: "adeff.csv", bytes: demoDatasetCsv() });
    expect(again.ok).toBe(false);
    if (!again.ok) expect(again.problems[0]).toMatch(/byte for byte the same as version 1 of adeff \(locked\)/);
  });
});

describe("screen, removal, lock and versions", () => {
  let draftId = "";
  it("flags e-mail and birth-date columns and refuses to lock while they are open", async () => {
    const up = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "adsl",
      fileName: "adsl.csv",
      bytes: csv(["usubjid,contact,brthdt,age", "S-1,ann@example.org,1970-02-03,55", "S-2,bo@example.org,1980-04-05,45"]),
    });
    expect(up.ok).toBe(true);
    if (!up.ok) return;
    draftId = up.versionId;
    const detail = await svc.getVersionDetail(studyId, draftId);
    const rules = detail?.hits.map((h) => `${h.column}:${h.rule}`).sort();
    expect(rules).toEqual(["brthdt:date", "contact:email", "usubjid:subject_code"]);
    expect(detail?.hits.find((h) => h.rule === "email")?.maskedExamples[0]).toBe("a••@e••••••.o••");
    const refused = await svc.lockVersion({ ...dana, signedInAt: new Date().toISOString() }, studyId, draftId);
    expect(refused.ok).toBe(false);
    if (!refused.ok) expect(refused.message).toMatch(/Resolve the identifier screen first: "usubjid", "contact", "brthdt" are still flagged/);
  });

  it("removes a column into a derived version that records what was removed, then locks", async () => {
    let detail = await svc.getVersionDetail(studyId, draftId);
    const email = detail?.hits.find((h) => h.rule === "email");
    const removed = await svc.removeFlaggedColumn(dana, studyId, email?.id ?? "");
    expect(removed.ok).toBe(true);
    if (!removed.ok) return;
    expect(removed.version).toBe(2);
    detail = await svc.getVersionDetail(studyId, removed.versionId);
    expect(detail?.version.removedColumns).toEqual(["contact"]);
    expect(detail?.version.derivedFromVersion).toBe(1);
    expect(detail?.columns.map((c) => c.name)).toEqual(["usubjid", "brthdt", "age"]);
    const birth = detail?.hits.find((h) => h.rule === "date");
    const b = await svc.removeFlaggedColumn(dana, studyId, birth?.id ?? "");
    expect(b.ok).toBe(true);
    if (!b.ok) return;
    detail = await svc.getVersionDetail(studyId, b.versionId);
    expect(detail?.version.removedColumns).toEqual(["contact", "brthdt"]);
    const subj = detail?.hits.find((h) => h.rule === "subject_code" && h.resolution === null);
    const short = await svc.recordNotIdentifier(dana, studyId, subj?.id ?? "", "code");
    expect(short.ok).toBe(false);
    expect((await svc.recordNotIdentifier(dana, studyId, subj?.id ?? "", "Pseudonymous subject code")).ok).toBe(true);
    const locked = await svc.lockVersion({ ...dana, signedInAt: new Date().toISOString() }, studyId, b.versionId);
    expect(locked.ok).toBe(true);
    const { table, typed } = await catalog.loadLockedTable(b.versionId);
    expect(table.columns).toEqual({ usubjid: ["S-1", "S-2"], age: ["55", "45"] });
    expect(typed.columns).toEqual({ usubjid: ["S-1", "S-2"], age: new Float64Array([55, 45]) });
  });

  it("summarises a changed upload against the locked version by key", async () => {
    const up = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "adsl",
      fileName: "adsl-v2.csv",
      bytes: csv(["usubjid,age,sex", "S-2,46,F", "S-3,30,M"]),
    });
    expect(up.ok).toBe(true);
    if (!up.ok) return;
    expect(up.version).toBe(4);
    expect(up.changes).toMatchObject({ againstVersion: 3, keyColumns: ["usubjid"], rowsAdded: 1, rowsRemoved: 1, rowsChanged: 1, rowsUnchanged: 0, columnsAdded: ["sex"], columnsRemoved: [] });
    expect(up.changes?.examples).toEqual({ added: ["S-3"], removed: ["S-1"], changed: [{ key: "S-2", columns: ["age"] }] });
  });

  it("leaves nothing in the work folder and stores every file under its SHA-256", async () => {
    const tmp = path.join(dir, "data", "datasets", "tmp");
    expect(existsSync(tmp) ? readdirSync(tmp) : []).toEqual([]);
    const rows = await db.select().from(t.datasetVersions);
    for (const v of rows) {
      expect(v.storedPath.endsWith(v.sha256)).toBe(true);
      expect(v.parsedPath).toBe(path.join("datasets", "columns", v.sha256.slice(0, 2), `${v.sha256}.arrow`));
      expect(existsSync(path.join(dir, "data", v.parsedPath!))).toBe(true);
    }
  });
});
