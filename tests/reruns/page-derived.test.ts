/**
 * What the compute thread stores beside a result for its results page (derive-page.ts): the page
 * document (the result without its per-observation arrays), the what-if inputs and the figure
 * answers. The page reads the same view, what-if and figures from them as from the whole document; a derived file that is
 * missing, names another result or was changed is ignored (the page reads the result itself);
 * a result file that no longer matches its SHA-256 is refused even when its page file is intact.
 */
import { readFileSync, writeFileSync } from "node:fs";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import { makeSignedRerun, type SignedRerun } from "../support/signed-rerun";

const { dir } = useTempDatabase();
const { db, t } = await import("~/.server/db/index.server");
const { storedRerunDocument, storedPageData } = await import("~/.server/reruns/rerun-rows.server");
const { derivedRelativePath, readDerivedFile } = await import("~/.server/reruns/derived-files");
const { resultRelativePath } = await import("~/.server/reruns/result-files");
const { StoredResultMismatch } = await import("~/.server/reruns/result-store.server");
const { rerunView } = await import("~/.server/reruns/rerun-view.server");
const { redaction } = await import("~/.server/redaction.server");
const { whatIfInputs, whatIfFor, rerunTable } = await import("~/.server/reruns/what-if.server");
const { loadLockedTable } = await import("~/.server/datasets/catalog.server");
const { figureAnswerBody } = await import("~/.server/figures/figure-answer");
const { figureModule } = await import("~/figures/registry");
const { eq } = await import("drizzle-orm");
type FigureKey = import("~/engine/checks").FigureKey;

let s: SignedRerun;
const rowOf = async (id: string) =>
  (
    await db
      .select({ id: t.reruns.id, resultSha256: t.reruns.resultSha256 })
      .from(t.reruns)
      .where(eq(t.reruns.id, id))
  )[0];
const dataFile = (relative: string) => path.join(dir, "data", relative);

beforeAll(async () => {
  s = await makeSignedRerun();
}, 120_000);

describe("a results page's data derived in the compute thread", () => {
  it("is stored beside the result and gives the page the same view and what-if as the whole document", async () => {
    const row = await rowOf(s.rerunId);
    const full = (await storedRerunDocument(row))!;
    const page = (await readDerivedFile<{ page: unknown }>(
      path.join(dir, "data"),
      row.resultSha256!,
      "page",
    ))!;
    expect(page.page).toBeTruthy();
    // read from the derived file (a fresh key: nothing of this rerun is parsed under another id)
    const derived = (await storedPageData({ id: `${row.id}-page`, resultSha256: row.resultSha256 }))!;
    expect(derived.whatIf).not.toBeNull();
    expect(JSON.stringify(derived.doc).length).toBeLessThan(JSON.stringify(full).length / 3);
    expect("fitted" in derived.doc.result.observations).toBe(false);
    for (const seesSubjects of [true, false]) {
      const fullView = rerunView(full, redaction(seesSubjects, [full]));
      expect(rerunView(derived.doc, redaction(seesSubjects, [derived.doc]))).toEqual(fullView);
    }
    // shaped for each viewer, the stored what-if inputs are those made for that viewer
    const table = rerunTable(full, (await loadLockedTable(s.datasetVersionId)).table);
    for (const options of [
      { withSubjectIds: true, canSave: true, prespecifiedExclusion: false },
      { withSubjectIds: false, canSave: false, prespecifiedExclusion: true },
    ])
      expect(whatIfFor(derived.whatIf!, options)).toEqual(whatIfInputs(full, table, options));
  });

  it("holds the answers of the page's figures, the same as made on request, with and without subject ids", async () => {
    const row = await rowOf(s.rerunId);
    const full = (await storedRerunDocument(row))!;
    const stored = (await readDerivedFile<Record<string, string>>(
      path.join(dir, "data"),
      row.resultSha256!,
      "figures",
    ))!;
    const keys = Object.keys(stored);
    expect(keys.length).toBeGreaterThan(10);
    const locked = (await loadLockedTable(s.datasetVersionId)).table;
    for (const key of keys) {
      const [figure, term, withSubjectIds] = JSON.parse(key) as [FigureKey, string | null, boolean];
      const table = figureModule(figure).needsTable ? rerunTable(full, locked) : undefined;
      const made = figureAnswerBody(full, figure, { term: term ?? undefined, withSubjectIds, table });
      expect(stored[key], key).toBe(made);
      if (!withSubjectIds) expect(redaction(false, [full]).leak(JSON.parse(made)), key).toBeNull();
    }
  });

  it("is ignored when missing, changed or of another result: the page reads the result itself", async () => {
    const row = await rowOf(s.sensitivityIds[0]);
    const sha = row.resultSha256!;
    const file = dataFile(derivedRelativePath(sha, "page"));
    const text = readFileSync(file, "utf8");
    const data = path.join(dir, "data");
    expect(await readDerivedFile(data, sha, "page")).not.toBeNull();
    expect(
      await readDerivedFile(
        data,
        sha.replace(/^./, (c) => (c === "0" ? "1" : "0")),
        "page",
      ),
    ).toBeNull();
    writeFileSync(file, text.replace(/"engineVersion":"/, '"engineVersion":"x'));
    expect(await readDerivedFile(data, sha, "page")).toBeNull();
    const read = (await storedPageData(row))!;
    expect(read.whatIf).toBeNull();
    expect(read.doc).toBe(await storedRerunDocument(row));
    writeFileSync(file, text);
  });

  it("does not stand in for a result file that no longer matches its SHA-256", async () => {
    const row = await rowOf(s.sensitivityIds[1] ?? s.sensitivityIds[0]);
    const file = dataFile(resultRelativePath(row.resultSha256!));
    const bytes = readFileSync(file, "utf8");
    writeFileSync(file, bytes.replace(/"engineVersion":"/, '"engineVersion":"x'));
    await expect(
      storedPageData({ id: `${row.id}-changed`, resultSha256: row.resultSha256 }),
    ).rejects.toBeInstanceOf(StoredResultMismatch);
    writeFileSync(file, bytes);
  });
});
