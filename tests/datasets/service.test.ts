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
  await db
    .insert(t.people)
    .values([
      { id: dana.id, email: "dana.okafor@plumbline.example", displayName: dana.name, externalId: "dana" },
    ]);
  await db
    .insert(t.studies)
    .values({ id: studyId, code: "T-1", title: "Test study", sponsor: "Test sponsor" });
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
    const events = await dbClient.execute(
      "SELECT action FROM audit_events WHERE study_id = 'study-1' ORDER BY seq",
    );
    expect(events.rows.map((r) => r.action)).toEqual([
      "dataset.upload",
      "dataset.screen_decision",
      "dataset.lock",
    ]);
  });

  it("serves preview windows from the typed columns: numbers sorted as numbers, missing cells last", async () => {
    const [v] = await catalog.listLockedVersions(studyId);
    const chgMissing = v.columns.find((c) => c.name === "chg")?.missing ?? 0;
    expect(chgMissing).toBeGreaterThan(0);
    const w = await svc.readRowsWindow(studyId, v.versionId, {
      offset: 0,
      limit: 1000,
      sort: { column: "chg", descending: false },
    });
    if (!w) throw new Error("no window");
    const chg = w.rows.map((r) => r[w.columns.indexOf("chg")]);
    expect(chg).toHaveLength(450);
    expect(chg.slice(450 - chgMissing)).toEqual(Array(chgMissing).fill(""));
    const values = chg.slice(0, 450 - chgMissing).map(Number);
    expect(values.every((x, i) => Number.isFinite(x) && (i === 0 || values[i - 1] <= x))).toBe(true);
    // The same cells as the original file, in the order of a numeric (not a text) sort.
    const file = demoDatasetCsv()
      .split("\n")
      .filter(Boolean)
      .map((l) => l.split(","));
    const at = file[0].indexOf("chg");
    const fromFile = file
      .slice(1)
      .map((r) => r[at])
      .filter((c) => c !== "" && c !== "NA")
      .map(Number)
      .sort((a, b) => a - b);
    expect(values).toEqual(fromFile);
    const byArm = await svc.readRowsWindow(studyId, v.versionId, {
      offset: 0,
      limit: 3,
      sort: { column: "arm", descending: true },
    });
    expect(byArm?.rows.map((r) => r[byArm.columns.indexOf("arm")])).toEqual(Array(3).fill("Placebo"));
  });

  it("refuses the same bytes again, naming the version", async () => {
    const again = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "adeff",
      fileName: "adeff.csv",
      bytes: demoDatasetCsv(),
    });
    expect(again.ok).toBe(false);
    if (!again.ok)
      expect(again.problems[0]).toMatch(/byte for byte the same as version 1 of adeff \(locked\)/);
  });
});

describe("screen, removal, lock and versions", () => {
  let draftId = "";
  it("flags e-mail and birth-date columns and refuses to lock while they are open", async () => {
    const up = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "adsl",
      fileName: "adsl.csv",
      bytes: csv([
        "usubjid,contact,brthdt,age",
        "S-1,ann@example.org,1970-02-03,55",
        "S-2,bo@example.org,1980-04-05,45",
      ]),
    });
    expect(up.ok).toBe(true);
    if (!up.ok) return;
    draftId = up.versionId;
    const detail = await svc.getVersionDetail(studyId, draftId);
    const rules = detail?.hits.map((h) => `${h.column}:${h.rule}`).sort();
    expect(rules).toEqual(["brthdt:date", "contact:email", "usubjid:subject_code"]);
    expect(detail?.hits.find((h) => h.rule === "email")?.maskedExamples[0]).toBe("a••@e••••••.o••");
    const refused = await svc.lockVersion(
      { ...dana, signedInAt: new Date().toISOString() },
      studyId,
      draftId,
    );
    expect(refused.ok).toBe(false);
    if (!refused.ok)
      expect(refused.message).toMatch(
        /Resolve the identifier screen first: "usubjid", "contact", "brthdt" are still flagged/,
      );
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
    expect(
      (await svc.recordNotIdentifier(dana, studyId, subj?.id ?? "", "Pseudonymous subject code")).ok,
    ).toBe(true);
    const locked = await svc.lockVersion(
      { ...dana, signedInAt: new Date().toISOString() },
      studyId,
      b.versionId,
    );
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
    expect(up.changes).toMatchObject({
      againstVersion: 3,
      keyColumns: ["usubjid"],
      rowsAdded: 1,
      rowsRemoved: 1,
      rowsChanged: 1,
      rowsUnchanged: 0,
      columnsAdded: ["sex"],
      columnsRemoved: [],
    });
    expect(up.changes?.examples).toEqual({
      added: ["S-3"],
      removed: ["S-1"],
      changed: [{ key: "S-2", columns: ["age"] }],
    });
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

describe("carried-forward resolutions, masking, net changes and purge", () => {
  let v4 = "";
  let v5 = "";
  let v6 = "";

  it("carries a 'not an identifier' resolution forward to the next version (same column and category), with its author and date", async () => {
    const listing = await svc.listDatasets(studyId);
    const versions = listing.find((d) => d.name === "adsl")?.versions ?? [];
    v4 = versions.find((v) => v.version === 4)?.id ?? "";
    const v3 = versions.find((v) => v.version === 3)?.id ?? "";
    const before = (await svc.getVersionDetail(studyId, v3))?.hits.find((h) => h.column === "usubjid");
    const detail = await svc.getVersionDetail(studyId, v4);
    const hit = detail?.hits.find((h) => h.column === "usubjid");
    expect(hit).toMatchObject({
      rule: "subject_code",
      resolution: "not_identifier",
      rationale: "Pseudonymous subject code",
      resolvedBy: dana.name,
      resolvedAt: before?.resolvedAt,
      carriedFromVersion: 3,
    });
    expect(detail?.version.unresolvedHits).toBe(0);
  });

  it("masks flagged columns in the preview rows until resolved, and does not sort by them", async () => {
    const up = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "adsl",
      fileName: "adsl-v5.csv",
      bytes: csv(["usubjid,age,sex,contact_no", "S-2,46,F,(555) 010-2030", "S-3,91,M,+1 555 010 4477"]),
    });
    expect(up.ok).toBe(true);
    if (!up.ok) return;
    v5 = up.versionId;
    const detail = await svc.getVersionDetail(studyId, v5);
    expect(detail?.hits.map((h) => `${h.column}:${h.rule}:${h.resolution ?? "open"}`).sort()).toEqual([
      "age:age_over_89:open",
      "contact_no:phone:open",
      "usubjid:subject_code:not_identifier",
    ]);
    expect(detail?.maskedColumns.sort()).toEqual(["age", "contact_no"]);
    const rows = await svc.readRowsWindow(studyId, v5, {
      offset: 0,
      limit: 10,
      sort: { column: "contact_no", descending: true },
    });
    expect(rows?.masked.sort()).toEqual(["age", "contact_no"]);
    expect(rows?.rows).toEqual([
      ["S-2", "##", "F", "(###) ###-####"],
      ["S-3", "##", "M", "+# ### ### ####"],
    ]);
    const ageHit = detail?.hits.find((h) => h.column === "age");
    expect(
      (
        await svc.recordNotIdentifier(
          dana,
          studyId,
          ageHit?.id ?? "",
          "Ages are capped at 90 before the data reach the study team",
        )
      ).ok,
    ).toBe(true);
    const after = await svc.readRowsWindow(studyId, v5, { offset: 0, limit: 10 });
    expect(after?.rows.map((r) => r[1])).toEqual(["46", "91"]);
    expect(after?.masked).toEqual(["contact_no"]);
  });

  it("reports net column changes for a derived version (a column added then removed is neither)", async () => {
    const hit = (await svc.getVersionDetail(studyId, v5))?.hits.find((h) => h.column === "contact_no");
    const removed = await svc.removeFlaggedColumn(dana, studyId, hit?.id ?? "");
    expect(removed.ok).toBe(true);
    if (!removed.ok) return;
    v6 = removed.versionId;
    const detail = await svc.getVersionDetail(studyId, v6);
    expect(detail?.version.changes).toMatchObject({
      againstVersion: 3,
      columnsAdded: ["sex"],
      columnsRemoved: [],
    });
  });

  it("purges a superseded, never-locked version after confirmation, audited, removing only files no other version holds", async () => {
    // The same bytes as version 4 under another dataset name share its stored files.
    const v4row = (await db.select().from(t.datasetVersions)).find((v) => v.id === v4);
    const v5row = (await db.select().from(t.datasetVersions)).find((v) => v.id === v5);
    if (!v4row || !v5row) throw new Error("versions missing");
    const copy = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "adsl_copy",
      fileName: "adsl-v2.csv",
      bytes: csv(["usubjid,age,sex", "S-2,46,F", "S-3,30,M"]),
    });
    expect(copy.ok).toBe(true);

    const unconfirmed = await svc.purgeVersion(dana, studyId, v5, false);
    expect(unconfirmed).toEqual({
      ok: false,
      message:
        "Confirm that version 5 of adsl and its stored file are to be removed for good (tick the box), then purge.",
    });
    const lockedOne =
      (await svc.listDatasets(studyId)).find((d) => d.name === "adsl")?.versions.find((v) => v.version === 3)
        ?.id ?? "";
    expect(await svc.purgeVersion(dana, studyId, lockedOne, true)).toEqual({
      ok: false,
      message: "Version 3 is locked; only a superseded version can be purged.",
    });
    expect(await svc.purgeVersion(dana, studyId, v6, true)).toEqual({
      ok: false,
      message: "Version 6 is draft; only a superseded version can be purged.",
    });

    const purged = await svc.purgeVersion(dana, studyId, v5, true);
    expect(purged).toEqual({ ok: true, removedFiles: [v5row.storedPath, v5row.parsedPath] });
    expect(existsSync(path.join(dir, "data", v5row.storedPath))).toBe(false);
    expect(existsSync(path.join(dir, "data", v5row.parsedPath ?? ""))).toBe(false);
    expect((await svc.getVersionDetail(studyId, v5))?.version).toMatchObject({
      status: "superseded",
      purgedBy: dana.name,
    });
    expect(await svc.readRowsWindow(studyId, v5, { offset: 0, limit: 10 })).toBeNull();
    expect(await svc.purgeVersion(dana, studyId, v5, true)).toEqual({
      ok: false,
      message: "Version 5 was already purged.",
    });

    const shared = await svc.purgeVersion(dana, studyId, v4, true);
    expect(shared).toEqual({ ok: true, removedFiles: [] });
    expect(existsSync(path.join(dir, "data", v4row.storedPath))).toBe(true);

    const events = await dbClient.execute(
      "SELECT action, entity_id, after_json FROM audit_events WHERE action = 'dataset.purge' ORDER BY seq",
    );
    expect(events.rows.map((r) => r.entity_id)).toEqual([v5, v4]);
    expect(JSON.parse(String(events.rows[1].after_json))).toMatchObject({
      dataset: "adsl",
      version: 4,
      removedFiles: [],
      keptFiles: [v4row.storedPath, v4row.parsedPath],
    });
    // The version 6 that was derived from version 5 still reads.
    expect((await svc.readRowsWindow(studyId, v6, { offset: 0, limit: 10 }))?.rows.length).toBe(2);
  });
});
