/**
 * The stored typed form of a dataset version, an Apache Arrow IPC file: what goes in comes back
 * (numbers with missing, text with empty and missing cells, dates as text, labels and other
 * column metadata, dataset metadata, row numbers), and the file is a standard Arrow IPC file.
 *
 * Python's pyarrow is not installed on this machine (and R's arrow package is not in Debian), so
 * the file is checked against the Arrow columnar format specification
 * (arrow.apache.org/docs/format/Columnar.html, "IPC File Format": the magic `ARROW1` padded to
 * 8 bytes at the start, the footer's int32 length and `ARROW1` at the end) and read back with
 * the Arrow project's own JavaScript reader (`tableFromIPC`), not with Plumbline's decoder. When
 * pyarrow is importable, it reads the file too.
 */
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { Type, tableFromIPC, type Dictionary } from "apache-arrow";
import { describe, expect, it } from "vitest";
import {
  readArrowColumns,
  textOf,
  typedColumnOf,
  writeArrowColumns,
  type StoredColumns,
} from "~/.server/datasets/arrow-columns.server";
import { storedColumnsFromParsed } from "~/.server/datasets/stored-columns.server";

const n = 1000;
const parsed = {
  format: "dataset-json",
  label: "Efficacy analysis dataset (invented)",
  keyColumns: ["id"],
  names: ["id", "dose", "arm", "note", "visitdt", "count"],
  cells: [
    Array.from({ length: n }, (_, i) => `S-${i}`),
    Array.from({ length: n }, (_, i) => ["1.5", "", "NA", ".", "-2e-3", "1.50", "12345678.125"][i % 7]),
    Array.from({ length: n }, (_, i) => ["Placebo", "Dose 1", ""][i % 3]),
    Array.from({ length: n }, (_, i) => (i % 2 ? "Größe · ±5 µg" : 'line one\nline two, "quoted"')),
    Array.from({ length: n }, (_, i) => ["2024-03-05", "2024", "2024-03", "", "2024-03-05T10:15"][i % 5]),
    Array.from({ length: n }, (_, i) => String(i % 400)),
  ],
  rowNumbers: Array.from({ length: n }, (_, i) => i + 3),
  columns: [
    { name: "id", label: "Subject identifier", type: "text" },
    { name: "dose", label: "Dose (mg)", type: "number", format: "8.3", declaredType: "decimal" },
    { name: "arm", label: "Planned arm", type: "text" },
    { name: "note", label: null, type: "text" },
    { name: "visitdt", label: "Visit date", type: "date", precision: "partial", format: "E8601DA" },
    { name: "count", label: "Count", type: "number", declaredType: "integer" },
  ],
};

async function written(stored: StoredColumns): Promise<string> {
  const file = path.join(mkdtempSync(path.join(os.tmpdir(), "plumbline-arrow-")), "x.arrow");
  await writeArrowColumns(file, stored);
  return file;
}

describe("Arrow columns file", () => {
  it("round-trips numbers with missing, text with empty and missing cells, dates as text, metadata and row numbers", async () => {
    const stored = storedColumnsFromParsed(parsed);
    const back = await readArrowColumns(await written(stored));
    expect(back.names).toEqual(parsed.names);
    expect(back.rowNumbers).toEqual(parsed.rowNumbers);
    const dose = back.columns[1];
    expect(dose).toBeInstanceOf(Float64Array);
    expect(Array.from((dose as Float64Array).slice(0, 7))).toEqual([
      1.5,
      Number.NaN,
      Number.NaN,
      Number.NaN,
      -0.002,
      1.5,
      12345678.125,
    ]);
    expect(Array.from(back.columns[5] as Float64Array).slice(398, 402)).toEqual([398, 399, 0, 1]);
    expect((back.columns[2] as (string | null)[]).slice(0, 3)).toEqual(["Placebo", "Dose 1", null]);
    expect(back.columns[0]).toEqual(parsed.cells[0]);
    expect(back.columns[3]).toEqual(parsed.cells[3]);
    expect((back.columns[4] as (string | null)[]).slice(0, 5)).toEqual([
      "2024-03-05",
      "2024",
      "2024-03",
      null,
      "2024-03-05T10:15",
    ]);
    expect(back.columnMeta).toEqual(parsed.columns);
    expect(back.dataset).toEqual({
      format: "dataset-json",
      label: "Efficacy analysis dataset (invented)",
      keyColumns: ["id"],
    });
    // The text the engine reads today: numbers in their shortest round-trip form, missing as "".
    expect(textOf(dose).slice(0, 7)).toEqual(["1.5", "", "", "", "-0.002", "1.5", "12345678.125"]);
    expect(textOf(back.columns[2]).slice(0, 3)).toEqual(["Placebo", "Dose 1", ""]);
  });

  it("keeps a numeric column as text when a number would lose a cell: a text cell, or a zero-padded code", () => {
    expect(typedColumnOf(["1", "two", ""], { type: "number" })).toEqual(["1", "two", null]);
    expect(typedColumnOf(["0012", "0105", "NA"], { type: "number" })).toEqual(["0012", "0105", null]);
    expect(typedColumnOf(["0.5", "-0.25", "10"], { type: "number" })).toEqual(
      new Float64Array([0.5, -0.25, 10]),
    );
    expect(typedColumnOf(["1", "2", ""], { type: "text" })).toEqual(["1", "2", null]);
  });

  it("is a standard Arrow IPC file: Float64 numbers, dictionary-encoded UTF-8 text, metadata a generic reader sees", async () => {
    const file = await written(
      storedColumnsFromParsed({ ...parsed, rowNumbers: Array.from({ length: n }, (_, i) => i + 1) }),
    );
    const bytes = readFileSync(file);
    // Arrow columnar format, IPC File Format: "ARROW1" + 2 bytes padding ... footer, int32 footer length, "ARROW1".
    expect(bytes.subarray(0, 8)).toEqual(Buffer.from("ARROW1\0\0", "latin1"));
    expect(bytes.subarray(bytes.length - 6).toString("latin1")).toBe("ARROW1");
    const footerLength = bytes.readInt32LE(bytes.length - 10);
    expect(footerLength).toBeGreaterThan(0);
    expect(footerLength).toBeLessThan(bytes.length - 18);

    const table = tableFromIPC(bytes);
    expect(table.numRows).toBe(n);
    expect(table.schema.fields.map((f) => f.name)).toEqual(parsed.names);
    const types = table.schema.fields.map((f) =>
      f.type.typeId === Type.Dictionary
        ? `dictionary<${String((f.type as Dictionary).dictionary)}, ${String((f.type as Dictionary).indices)}>`
        : String(f.type),
    );
    expect(types).toEqual([
      "dictionary<Utf8, Int32>",
      "Float64",
      "dictionary<Utf8, Int32>",
      "dictionary<Utf8, Int32>",
      "dictionary<Utf8, Int32>",
      "Float64",
    ]);
    const dose = table.getChild("dose")!;
    expect([0, 1, 2, 3, 4].map((i) => dose.get(i))).toEqual([1.5, null, null, null, -0.002]);
    expect(dose.nullCount).toBe(parsed.cells[1].filter((c) => c === "" || c === "NA" || c === ".").length);
    expect([0, 1, 2].map((i) => table.getChild("arm")!.get(i))).toEqual(["Placebo", "Dose 1", null]);
    expect(table.getChild("visitdt")!.get(1)).toBe("2024");
    const visit = table.schema.fields[4].metadata;
    expect(visit.get("label")).toBe("Visit date");
    expect(JSON.parse(visit.get("plumbline:column")!)).toEqual(parsed.columns[4]);
    expect(table.schema.fields[3].metadata.has("label")).toBe(false);
    expect(JSON.parse(table.schema.metadata.get("plumbline:dataset")!)).toMatchObject({
      label: "Efficacy analysis dataset (invented)",
      keyColumns: ["id"],
      format: "dataset-json",
    });
    // Row numbers 1..n are implied, not stored.
    expect(table.schema.metadata.has("plumbline:row-numbers")).toBe(false);
  });

  const python = spawnSync("python3", ["-c", "import pyarrow"], { encoding: "utf8" });
  it.runIf(python.status === 0)("is read by Python's pyarrow with the same values", async () => {
    const file = await written(storedColumnsFromParsed(parsed));
    const script =
      "import sys, json, pyarrow.ipc as ipc\nt = ipc.open_file(sys.argv[1]).read_all()\nprint(json.dumps({'dose': t.column('dose').to_pylist()[:5], 'arm': t.column('arm').to_pylist()[:3]}))";
    const out = spawnSync("python3", ["-c", script, file], { encoding: "utf8" });
    expect(out.status).toBe(0);
    expect(JSON.parse(out.stdout)).toEqual({
      dose: [1.5, null, null, null, -0.002],
      arm: ["Placebo", "Dose 1", null],
    });
  });
});
