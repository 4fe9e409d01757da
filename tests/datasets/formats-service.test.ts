/**
 * The datasets service with the formats beyond CSV, on a real database and data folder: CDISC's
 * public example files (tests/fixtures/cdisc/) are stored with their column metadata, and a
 * flagged column removed from a transport file or an NDJSON file gives a derived version that
 * Plumbline can read back (a transport file becomes CSV; NDJSON stays NDJSON).
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { db, t, dbClient } = await import("~/.server/db/index.server");
const svc = await import("~/.server/datasets/datasets.server");
const { absoluteStorePath } = await import("~/.server/datasets/store.server");
const { parseDatasetFile } = await import("~/.server/datasets/parse.server");

const CDISC = path.join(import.meta.dirname, "..", "fixtures", "cdisc");
const studyId = "study-f";
const dana = { id: "p-dana", name: "Dana Okafor" };

beforeAll(async () => {
  await db
    .insert(t.people)
    .values([
      { id: dana.id, email: "dana.okafor@plumbline.example", displayName: dana.name, externalId: "dana" },
    ]);
  await db
    .insert(t.studies)
    .values({ id: studyId, code: "T-F", title: "Formats study", sponsor: "Test sponsor" });
});

async function removeOneFlagged(versionId: string) {
  const detail = await svc.getVersionDetail(studyId, versionId);
  const hit = detail?.hits.find((h) => !detail.keyColumns.includes(h.column));
  expect(hit, "a flagged column outside the key").toBeDefined();
  const removed = await svc.removeFlaggedColumn(dana, studyId, hit?.id ?? "");
  expect(removed.ok, JSON.stringify(removed)).toBe(true);
  if (!removed.ok) throw new Error("not removed");
  const [v] = await dbClient
    .execute({
      sql: "SELECT format, file_name, stored_path, columns_json FROM dataset_versions WHERE id = ?",
      args: [removed.versionId],
    })
    .then((r) => r.rows);
  return { column: hit?.column as string, v };
}

describe("formats in the service", () => {
  it("stores adsl.xpt with labels, formats and declared types, and a removal gives a CSV version that reads back", async () => {
    const up = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "adsl",
      fileName: "adsl.xpt",
      bytes: readFileSync(path.join(CDISC, "adsl.xpt")),
    });
    expect(up.ok, JSON.stringify(up)).toBe(true);
    if (!up.ok) return;
    const detail = await svc.getVersionDetail(studyId, up.versionId);
    expect(detail?.version.format).toBe("xpt");
    expect(detail?.columns.find((c) => c.name === "AGE")).toMatchObject({
      label: "Age",
      type: "number",
      valueType: "integer",
      declaredType: "Num",
      length: 8,
    });
    const { column, v } = await removeOneFlagged(up.versionId);
    expect(v.format).toBe("csv");
    expect(v.file_name).toBe("adsl.csv");
    const columns = JSON.parse(String(v.columns_json)) as { name: string; label: string }[];
    expect(columns.map((c) => c.name)).not.toContain(column);
    expect(columns.find((c) => c.name === "USUBJID")?.label).toBe("Unique Subject Identifier");
    const reread = await parseDatasetFile(absoluteStorePath(String(v.stored_path)), "adsl.csv", "csv");
    expect(reread.ok && reread.dataset.rowNumbers.length).toBe(254);
    expect(reread.ok && reread.dataset.names).toEqual(columns.map((c) => c.name));
  });

  it("a removal from adsl.ndjson keeps the NDJSON form, which reads back", async () => {
    const up = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "adslnd",
      fileName: "adsl.ndjson",
      bytes: readFileSync(path.join(CDISC, "adsl.ndjson")),
    });
    expect(up.ok, JSON.stringify(up)).toBe(true);
    if (!up.ok) return;
    const { column, v } = await removeOneFlagged(up.versionId);
    expect(v.format).toBe("dataset-json");
    expect(v.file_name).toBe("adsl.ndjson");
    const reread = await parseDatasetFile(
      absoluteStorePath(String(v.stored_path)),
      "adsl.ndjson",
      "dataset-json",
    );
    expect(reread.ok, reread.ok ? "" : reread.problems.join("\n")).toBe(true);
    if (!reread.ok) return;
    expect(reread.dataset.names).not.toContain(column);
    expect(reread.dataset.rowNumbers).toHaveLength(254);
    expect(reread.dataset.keyColumns).toEqual(["USUBJID"]);
  });

  it("an upload that names no key keeps the key dm.json declares", async () => {
    const up = await svc.uploadBytes(dana, {
      studyId,
      datasetName: "dm",
      fileName: "dm.json",
      bytes: readFileSync(path.join(CDISC, "dm.json")),
      keyColumns: [],
    });
    expect(up.ok, JSON.stringify(up)).toBe(true);
    if (!up.ok) return;
    expect((await svc.getVersionDetail(studyId, up.versionId))?.keyColumns).toEqual(["STUDYID", "USUBJID"]);
  });
});
