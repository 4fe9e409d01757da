/**
 * Where a rerun's result is stored: the compute thread writes the canonical JSON to
 * `results/<aa>/<sha256>.json` under DATA_DIR and the row keeps only its SHA-256; a result stored
 * the former way (in the row's `result_json`) stays readable and is moved to its file by
 * `migrateStoredResults`, which can be interrupted and repeated; a result whose bytes no longer
 * hash to the recorded SHA-256 is refused, wherever it is stored.
 */
import { existsSync, readdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { createHash } from "node:crypto";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import { makeSignedRerun, type SignedRerun } from "../support/signed-rerun";

const { dir } = useTempDatabase();
const { db, t, writeTransaction } = await import("~/.server/db/index.server");
const reruns = await import("~/.server/reruns/reruns.server");
const { storedResultJson, migrateStoredResults, StoredResultMismatch } =
  await import("~/.server/reruns/result-store.server");
const { resultRelativePath } = await import("~/.server/reruns/result-files");
const { verifyAuditChain } = await import("~/.server/audit.server");
const { eq } = await import("drizzle-orm");

let s: SignedRerun;
let sha256 = "";
let file = "";
let bytes = "";
beforeAll(async () => {
  s = await makeSignedRerun();
  const [row] = await db
    .select({ sha: t.reruns.resultSha256, json: t.reruns.resultJson })
    .from(t.reruns)
    .where(eq(t.reruns.id, s.rerunId));
  sha256 = row.sha!;
  expect(row.json).toBeNull();
  file = path.join(dir, "data", resultRelativePath(sha256));
  bytes = readFileSync(file, "utf8");
}, 120_000);

/** Puts the result back where reruns kept it before: in the row, with no file. */
async function storeTheFormerWay(): Promise<void> {
  await writeTransaction((tx) =>
    tx.update(t.reruns).set({ resultJson: bytes }).where(eq(t.reruns.id, s.rerunId)),
  );
  rmSync(file);
}

const rowJson = async () =>
  (await db.select({ json: t.reruns.resultJson }).from(t.reruns).where(eq(t.reruns.id, s.rerunId)))[0].json;

describe("a rerun's stored result", () => {
  it("is a file named by the SHA-256 of its bytes; the row holds only the hash", () => {
    expect(createHash("sha256").update(readFileSync(file)).digest("hex")).toBe(sha256);
    expect(JSON.parse(bytes).engineVersion).toBeTruthy();
    expect(existsSync(path.join(dir, "data", "results", "tmp"))).toBe(true);
  });

  it("stored the former way (in its row) is read as before, then moved to its file with the same bytes", async () => {
    await storeTheFormerWay();
    expect(await storedResultJson({ id: s.rerunId, resultSha256: sha256 })).toBe(bytes);
    expect(await migrateStoredResults()).toEqual({ moved: 1, refused: [] });
    expect(readFileSync(file, "utf8")).toBe(bytes);
    expect(await rowJson()).toBeNull();
    expect(await storedResultJson({ id: s.rerunId, resultSha256: sha256 })).toBe(bytes);
    // the page reads the same document; the audit trail, which names the hash, still verifies
    const r = await reruns.getRerun(s.studyId, s.rerunId);
    expect(r.rerun.resultSha256).toBe(sha256);
    expect((await verifyAuditChain()).intact).toBe(true);
  });

  it("a move interrupted after the file was written (row not yet emptied) is readable and finished by the next pass", async () => {
    await storeTheFormerWay();
    writeFileSync(file, bytes);
    expect(await storedResultJson({ id: s.rerunId, resultSha256: sha256 })).toBe(bytes);
    expect(await migrateStoredResults()).toEqual({ moved: 1, refused: [] });
    expect(await rowJson()).toBeNull();
    expect(await migrateStoredResults()).toEqual({ moved: 0, refused: [] });
    expect(readdirWork()).toEqual([]);
  });

  it("a move interrupted with half a file written: the rename never happened, so the row is read and the move redone", async () => {
    await storeTheFormerWay();
    // a work file of a process that no longer runs (no process has a pid this large)
    const half = path.join(dir, "data", "results", "tmp", "2147483646-1-half.json");
    writeFileSync(half, bytes.slice(0, 100));
    expect(await storedResultJson({ id: s.rerunId, resultSha256: sha256 })).toBe(bytes);
    expect(await migrateStoredResults()).toEqual({ moved: 1, refused: [] });
    expect(readFileSync(file, "utf8")).toBe(bytes);
    expect(existsSync(half)).toBe(false);
  });

  it("whose bytes were changed is refused, in its file or in its row, and a changed row is not moved", async () => {
    const changed = bytes.replace(/"engineVersion":"[^"]*"/, '"engineVersion":"0.0.0"');
    expect(changed).not.toBe(bytes);
    writeFileSync(file, changed);
    await expect(storedResultJson({ id: s.rerunId, resultSha256: sha256 })).rejects.toBeInstanceOf(
      StoredResultMismatch,
    );
    rmSync(file);
    await writeTransaction((tx) =>
      tx.update(t.reruns).set({ resultJson: changed }).where(eq(t.reruns.id, s.rerunId)),
    );
    await expect(storedResultJson({ id: s.rerunId, resultSha256: sha256 })).rejects.toThrow(
      /does not match the SHA-256 recorded/,
    );
    expect(await migrateStoredResults()).toEqual({ moved: 0, refused: [s.rerunId] });
    expect(existsSync(file)).toBe(false);
    // put it right for any later reader
    await writeTransaction((tx) =>
      tx.update(t.reruns).set({ resultJson: null }).where(eq(t.reruns.id, s.rerunId)),
    );
    writeFileSync(file, bytes);
  });
});

const readdirWork = (): string[] => readdirSync(path.join(dir, "data", "results", "tmp"));
