/**
 * The dataset readers on files built to break them: one test per wrong behaviour found in
 * review (a stray quote that hung the upload, a million columns, nesting deep enough to
 * overflow JSON.parse, two byte-order marks, huge and case-duplicate column names), and the
 * typing rules (decimal commas with semicolons, a few text cells among numbers, declared types
 * counted in full and the choice to read a column by its values, partial ISO 8601 dates).
 */
import { mkdtempSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { describe, expect, it } from "vitest";
import {
  parseCsv,
  parseDatasetFile,
  parseDatasetJson,
  type ParseOutcome,
} from "~/.server/datasets/parse.server";
import { readCsv } from "~/engine-io/dataset/csv";
import { isoPrecision } from "~/engine-io/dataset/typing";

const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-readers-"));
let n = 0;
function file(content: string | Buffer, name: string): string {
  const p = path.join(dir, `${++n}-${name}`);
  writeFileSync(p, content);
  return p;
}
const csv = (text: string | Buffer, options = {}) => parseCsv(file(text, "adeff.csv"), "adeff.csv", options);
const problems = (o: ParseOutcome) => (o.ok ? [] : o.problems);

/** Fails the test instead of hanging when a read never finishes. */
function within<T>(ms: number, p: Promise<T>): Promise<T> {
  return Promise.race([
    p,
    new Promise<T>((_, reject) => setTimeout(() => reject(new Error(`no answer within ${ms} ms`)), ms)),
  ]);
}

describe("upload hardening", () => {
  it("a stray quote in an unquoted field, far from the last row, is refused at once (it hung before)", async () => {
    // Big enough that csv-parse applies back-pressure: the old reader waited for a drain that never came.
    const rows = ["subjid,note,aval"];
    rows.push('S0,ab"c,1');
    for (let i = 1; i < 60_000; i++) rows.push(`S${i},some ordinary text in a cell,${i}`);
    const o = await within(10_000, csv(rows.join("\n") + "\n"));
    const p = problems(o);
    expect(p).toHaveLength(1);
    expect(p[0]).toMatch(/^adeff\.csv: line 2: .*quote.* Check the quotes on that line\.$/i);
  });

  it("an 8.9 MB CSV with 1,000,000 columns is refused quickly, naming the limit and its setting", async () => {
    const names = Array.from({ length: 1_000_000 }, (_, i) => `c${i}`);
    const text = names.join(",") + "\n" + names.map(() => "1").join(",") + "\n";
    expect(text.length).toBeGreaterThan(8_800_000);
    const started = performance.now();
    const o = await csv(text);
    expect(performance.now() - started).toBeLessThan(3_000);
    // The header line (6.9 MB) passes the default byte cap of 1 MiB first.
    expect(problems(o)).toEqual([
      "adeff.csv: the header line is longer than 1,048,576 bytes, the limit. Upload only the columns the analysis needs, or ask an administrator to raise DATASET_MAX_HEADER_BYTES.",
    ]);
    const narrow = await readCsv(
      (async function* () {
        yield Buffer.from("a,b,c,d\n1,2,3,4\n");
      })(),
      16,
      "wide.csv",
      { limits: { maxColumns: 3 } },
    );
    expect(narrow.ok ? [] : narrow.problems).toEqual([
      "wide.csv has 4 columns; the limit is 3. Upload only the columns the analysis needs, or ask an administrator to raise DATASET_MAX_COLUMNS.",
    ]);
  });

  it("more columns than the limit in Dataset-JSON are refused too", async () => {
    const columns = Array.from({ length: 2001 }, (_, i) => ({
      itemOID: `IT.C${i}`,
      name: `C${i}`,
      label: `C${i}`,
      dataType: "integer",
    }));
    const doc = {
      datasetJSONCreationDateTime: "2026-01-01T00:00:00",
      datasetJSONVersion: "1.1.0",
      itemGroupOID: "IG.X",
      records: 1,
      name: "X",
      label: "X",
      columns,
      rows: [columns.map(() => 1)],
    };
    expect(problems(await parseDatasetJson(file(JSON.stringify(doc), "wide.json"), "wide.json"))).toEqual([
      "wide.json has 2,001 columns; the limit is 2,000. Upload only the columns the analysis needs, or ask an administrator to raise DATASET_MAX_COLUMNS.",
    ]);
  });

  it("deeply nested Dataset-JSON is a clear refusal (JSON.parse overflowed the stack before)", async () => {
    const deep = '{"rows":' + "[".repeat(200_000) + "]".repeat(200_000) + "}";
    expect(problems(await parseDatasetJson(file(deep, "deep.json"), "deep.json"))).toEqual([
      "deep.json nests arrays or objects more than 32 levels deep (at character 40); Dataset-JSON needs no more than 4. This is not a Dataset-JSON file: export the dataset again as Dataset-JSON v1.1.",
    ]);
  });

  it("two byte-order marks are refused instead of entering the first column's name", async () => {
    const bytes = Buffer.concat([
      Buffer.from([0xef, 0xbb, 0xbf, 0xef, 0xbb, 0xbf]),
      Buffer.from("subjid,age\nS1,40\n"),
    ]);
    expect(problems(await csv(bytes))).toEqual([
      "adeff.csv: the name of column 1 holds a byte-order mark (U+FEFF): the file starts with two byte-order marks. Save the file again as UTF-8 with at most one byte-order mark.",
    ]);
  });

  it("a 10,000-character column name and names that differ only in case are refused", async () => {
    const long = "x".repeat(10_000);
    expect(problems(await csv(`subjid,${long}\nS1,1\n`))).toEqual([
      `adeff.csv: the name of column 2 ("${"x".repeat(40)}…") has 10,000 characters; the limit is 200. Give it a shorter name.`,
    ]);
    expect(problems(await csv("subjid,AGE,age\nS1,40,41\n"))).toEqual([
      'adeff.csv: the column names "AGE" (column 2) and "age" (column 3) differ only in upper and lower case. Column names must be unique regardless of case; rename one.',
    ]);
  });

  it("an empty file gets 'The file … is empty' in every format", async () => {
    for (const [name, format] of [
      ["a.csv", "csv"],
      ["a.json", "dataset-json"],
      ["a.xpt", "xpt"],
    ] as const) {
      expect(problems(await parseDatasetFile(file("", name), name, format))).toEqual([
        `The file ${name} is empty.`,
      ]);
    }
  });

  it("a file named .xpt that is not a transport file, and an XPORT version 8 file, get clear messages", async () => {
    const notXpt = await parseDatasetFile(file("subjid,age\nS1,4\n", "adsl.xpt"), "adsl.xpt", "xpt");
    expect(problems(notXpt)[0]).toMatch(
      /^adsl\.xpt is not an XPORT transport file: it does not start with the XPORT library header\./,
    );
    const v8 = Buffer.from(
      "HEADER RECORD*******LIBV8   HEADER RECORD!!!!!!!000000000000000000000000000000  ".padEnd(320, " "),
      "latin1",
    );
    expect(problems(await parseDatasetFile(file(v8, "v8.xpt"), "v8.xpt", "xpt"))[0]).toMatch(
      /^v8\.xpt is an XPORT version 8 transport file; Plumbline reads version 5/,
    );
  });
});

describe("CSV typing", () => {
  it("reads decimal commas in a semicolon file as numbers", async () => {
    const o = await csv("subjid;aval;chg;site\nS1;1,5;-0,25;701\nS2;2;0,5;703\nS3;;1,75;701\n");
    expect(o.ok).toBe(true);
    if (!o.ok) return;
    expect(o.dataset.cells[1]).toEqual(["1.5", "2", ""]);
    expect(o.dataset.cells[2]).toEqual(["-0.25", "0.5", "1.75"]);
    expect(o.dataset.columns[1]).toMatchObject({
      type: "number",
      valueType: "number",
      decimalComma: true,
      mean: 1.75,
    });
    expect(o.dataset.columns[3]).toMatchObject({ type: "number", valueType: "integer" });
    expect(o.dataset.columns[3].decimalComma).toBeUndefined();
    // With commas as separators, nothing is reinterpreted.
    const comma = await csv('subjid,aval\nS1,"1,5"\nS2,"2,5"\n');
    expect(comma.ok && comma.dataset.columns[1].type).toBe("text");
  });

  it("warns about a column of numbers with a few text cells, naming column, rows and values", async () => {
    const rows = ["subjid,crp"];
    for (let i = 1; i <= 40; i++)
      rows.push(`S${i},${i === 4 ? "<5" : i === 19 ? "n/a" : (i * 1.5).toFixed(1)}`);
    const o = await csv(rows.join("\n") + "\n");
    expect(o.ok).toBe(true);
    if (!o.ok) return;
    expect(o.dataset.columns[1].type).toBe("text");
    expect(o.dataset.columns[1].warnings).toEqual([
      'adeff.csv: column "crp" is mostly numbers, but 2 cells hold text, so it was read as text: row 4 "<5", row 19 "n/a". Correct them (or leave missing values empty) and upload again to read the column as numbers.',
    ]);
    expect(o.dataset.columns[0].warnings).toBeUndefined();
  });
});

describe("Dataset-JSON declared types", () => {
  const doc = (rows: unknown[][]) =>
    JSON.stringify({
      datasetJSONCreationDateTime: "2026-11-30T10:00:00",
      datasetJSONVersion: "1.1.0",
      itemGroupOID: "IG.ADLB",
      records: rows.length,
      name: "ADLB",
      label: "Laboratory analysis dataset",
      columns: [
        {
          itemOID: "IT.USUBJID",
          name: "USUBJID",
          label: "Unique subject identifier",
          dataType: "string",
          keySequence: 1,
        },
        { itemOID: "IT.AVAL", name: "AVAL", label: "Analysis value", dataType: "integer" },
        { itemOID: "IT.ADT", name: "ADT", label: "Analysis date", dataType: "date" },
        { itemOID: "IT.ADTM", name: "ADTM", label: "Analysis datetime", dataType: "datetime" },
      ],
      rows,
    });
  const rows = Array.from({ length: 3000 }, (_, i) => [
    `S${i + 1}`,
    i % 7 === 3 ? i + 0.5 : i,
    "2025-03",
    "2025-03-04T10:15",
  ]);
  const decimals = rows.filter((r) => !Number.isInteger(r[1])).length;

  it("counts every cell that breaks its declared type and names the first ones", async () => {
    expect(decimals).toBe(429);
    const o = await parseDatasetJson(file(doc(rows), "adlb.json"), "adlb.json");
    expect(problems(o)).toEqual([
      `adlb.json: 429 cells in column "AVAL" declared integer hold decimals; first: row 4 '3.5', row 11 '10.5', row 18 '17.5', …. Correct the file, or read this column by its values (upload option, with a reason for the audit trail).`,
    ]);
  });

  it("reads such a column by its values when the data manager chooses so", async () => {
    const o = await parseDatasetJson(file(doc(rows), "adlb.json"), "adlb.json", { readByValues: ["AVAL"] });
    expect(o.ok).toBe(true);
    if (!o.ok) return;
    expect(o.dataset.columns[1]).toMatchObject({
      name: "AVAL",
      declaredType: "integer",
      valueType: "number",
      readByValues: true,
      type: "number",
    });
    expect(o.dataset.cells[1][3]).toBe("3.5");
    expect(o.dataset.keyColumns).toEqual(["USUBJID"]);
    const csvFile = await parseCsv(file("subjid,age\nS1,40\n", "a.csv"), "a.csv", { readByValues: ["age"] });
    expect(problems(csvFile)[0]).toMatch(
      /^a\.csv: reading columns by their values applies to Dataset-JSON files/,
    );
    const unknown = await parseDatasetJson(file(doc(rows), "adlb.json"), "adlb.json", {
      readByValues: ["AVALX"],
    });
    expect(problems(unknown)[0]).toMatch(
      /^adlb\.json: the column "AVALX" to read by its values is not in the file\./,
    );
  });

  it("keeps partial ISO 8601 dates as text, typed date or datetime, with their precision", async () => {
    const o = await parseDatasetJson(
      file(
        doc([
          ["S1", 1, "2025-03", "2025-03-04"],
          ["S2", 2, "2025", "2025-03-04T10:15"],
          ["S3", 3, "2025-03-31", null],
        ]),
        "adlb.json",
      ),
      "adlb.json",
    );
    expect(o.ok).toBe(true);
    if (!o.ok) return;
    expect(o.dataset.columns[2]).toMatchObject({ type: "date", precision: { month: 1, year: 1, day: 1 } });
    expect(o.dataset.columns[3]).toMatchObject({ type: "datetime", precision: { day: 1, minute: 1 } });
    expect(o.dataset.cells[2]).toEqual(["2025-03", "2025", "2025-03-31"]);
    const bad = await parseDatasetJson(
      file(
        doc([
          ["S1", 1, "2025-02-30", null],
          ["S2", 2, "03/04/2025", null],
        ]),
        "adlb.json",
      ),
      "adlb.json",
    );
    expect(problems(bad)[0]).toBe(
      `adlb.json: 2 cells in column "ADT" declared date are not ISO 8601 dates; first: row 1 '2025-02-30', row 2 '03/04/2025'. Correct the file, or read this column by its values (upload option, with a reason for the audit trail).`,
    );
  });

  it("ISO 8601 precision of dates, datetimes and times (ISO 8601-1:2019, reduced precision)", () => {
    expect(isoPrecision("1950", "date")).toBe("year");
    expect(isoPrecision("1950-07", "date")).toBe("month");
    expect(isoPrecision("2024-02-29", "date")).toBe("day");
    expect(isoPrecision("2023-02-29", "date")).toBeNull();
    expect(isoPrecision("2024-02-29T10", "datetime")).toBe("hour");
    expect(isoPrecision("2024-02-29T10:15:30.5Z", "datetime")).toBe("second");
    expect(isoPrecision("2024-02-29T10:15", "date")).toBeNull();
    expect(isoPrecision("2024-13", "date")).toBeNull();
  });
});
