/** The stored parsed form reads back exactly what was written, for plain and coded columns. */
import { mkdtempSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { readColumnsFile, writeColumnsFile } from "~/.server/datasets/columns-file.server";

describe("columns file", () => {
  it("round-trips unique, repeated, empty and non-ASCII cells with their row numbers", async () => {
    const n = 1000;
    const parsed = {
      names: ["id", "arm", "note", "many"],
      cells: [
        Array.from({ length: n }, (_, i) => `S-${i}`),
        Array.from({ length: n }, (_, i) => ["Placebo", "Dose 1", ""][i % 3]),
        Array.from({ length: n }, (_, i) => (i % 2 ? "Größe · ±5 µg" : "line one\nline two, \"quoted\"")),
        Array.from({ length: n }, (_, i) => String(i % 400)),
      ],
      rowNumbers: Array.from({ length: n }, (_, i) => i + 3),
    };
    const file = path.join(mkdtempSync(path.join(os.tmpdir(), "plumbline-cols-")), "x.cols");
    await writeColumnsFile(file, parsed);
    expect(await readColumnsFile(file)).toEqual(parsed);
  });
});
