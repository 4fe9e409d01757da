/**
 * An upload that fails by an exception rather than a reader's refusal (a reader that gives up
 * on a file it cannot walk, a store folder that cannot be written) is still a refusal: a clear
 * message, an audit event, no dataset, no version and no file left in the work or store folders.
 */
import { existsSync, mkdirSync, readdirSync, rmSync, writeFileSync } from "node:fs";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

const { dir } = useTempDatabase();
const { db, t, dbClient } = await import("~/.server/db/index.server");
const { uploadBytes, uploadDataset } = await import("~/.server/datasets/datasets.server");

const studyId = "study-f";
const dana = { id: "p-dana", name: "Dana Okafor" };
const files = (sub: string): string[] => {
  const base = path.join(dir, "data", "datasets", sub);
  if (!existsSync(base)) return [];
  return readdirSync(base, { recursive: true, withFileTypes: true })
    .filter((e) => e.isFile())
    .map((e) => e.name);
};
const count = async (sql: string) => Number((await dbClient.execute(sql)).rows[0].n);

beforeAll(async () => {
  await db.insert(t.people).values({
    id: dana.id,
    email: "dana.okafor@plumbline.example",
    displayName: dana.name,
    externalId: "dana",
  });
  await db
    .insert(t.studies)
    .values({ id: studyId, code: "F-1", title: "Failure test", sponsor: "Test sponsor" });
});

describe("an upload that fails by an exception", () => {
  it("is refused with a message and an audit event when the reader throws, leaving no work file", async () => {
    // 200 000 levels of nesting: deeper than any reader walks recursively.
    const nested = `{"datasetJSONVersion":"1.1","rows":${"[".repeat(200_000)}${"]".repeat(200_000)}}`;
    const refusedBefore = await count(
      "SELECT count(*) AS n FROM audit_events WHERE action = 'dataset.upload_refused'",
    );
    const result = await uploadBytes(dana, {
      studyId,
      datasetName: "adnest",
      fileName: "adnest.json",
      bytes: nested,
    });
    expect(result.ok).toBe(false);
    expect(result.ok ? "" : result.problems.join(" ")).toMatch(/adnest\.json/);
    expect(
      await count("SELECT count(*) AS n FROM audit_events WHERE action = 'dataset.upload_refused'"),
    ).toBe(refusedBefore + 1);
    expect(await count("SELECT count(*) AS n FROM datasets WHERE name = 'adnest'")).toBe(0);
    expect(files("tmp")).toEqual([]);
  });

  it("is refused, not thrown, when the work file cannot be read (a folder in its place)", async () => {
    const workPath = path.join(dir, "data", "datasets", "tmp", `${process.pid}-0-folder.upload`);
    mkdirSync(workPath, { recursive: true });
    const result = await uploadDataset(dana, {
      studyId,
      datasetName: "adfolder",
      fileName: "adfolder.csv",
      workPath,
      byteSize: 10,
      sha256: "0".repeat(64),
    }).catch((e: unknown) => e);
    expect(result).toEqual({
      ok: false,
      problems: [
        expect.stringMatching(
          /^Plumbline could not store adfolder\.csv: a folder inside the data folder is missing or is not a folder \(EISDIR\)\. Nothing was stored\./,
        ),
      ],
    });
    expect(
      await count(
        "SELECT count(*) AS n FROM audit_events WHERE action = 'dataset.upload_refused' AND detail LIKE '%adfolder.csv%'",
      ),
    ).toBe(1);
    expect(await count("SELECT count(*) AS n FROM datasets WHERE name = 'adfolder'")).toBe(0);
    rmSync(workPath, { recursive: true });
  });

  it("is refused as a storage problem when the store cannot be written, with nothing half-stored", async () => {
    const blobs = path.join(dir, "data", "datasets", "blobs");
    rmSync(blobs, { recursive: true, force: true });
    mkdirSync(path.dirname(blobs), { recursive: true });
    writeFileSync(blobs, "not a folder");
    try {
      const result = await uploadBytes(dana, {
        studyId,
        datasetName: "adstore",
        fileName: "adstore.csv",
        bytes: "usubjid,age\nS1,40\nS2,41\n",
      });
      expect(result).toEqual({
        ok: false,
        problems: [
          expect.stringMatching(
            /^Plumbline could not store adstore\.csv: a folder inside the data folder is missing or is not a folder \(E[A-Z]+\)\. Nothing was stored\./,
          ),
        ],
      });
      expect(await count("SELECT count(*) AS n FROM datasets WHERE name = 'adstore'")).toBe(0);
      expect(
        await count(
          "SELECT count(*) AS n FROM audit_events WHERE action = 'dataset.upload_refused' AND detail LIKE '%adstore.csv%'",
        ),
      ).toBe(1);
      expect(files("tmp")).toEqual([]);
      expect(files("columns")).toEqual([]);
    } finally {
      rmSync(blobs, { force: true });
    }
  });
});
