/**
 * Reading and checking uploaded files: delimiter and byte-order-mark handling, type inference,
 * column summaries, key detection, Dataset-JSON v1.1, and one test per refusal with its message
 * (each names the file, the column and the row).
 */
import { mkdtempSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { describe, expect, it } from "vitest";
import {
  detectDelimiter,
  parseCsv,
  parseDatasetJson,
  type ParseOutcome,
} from "~/.server/datasets/parse.server";

const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-parse-"));
let n = 0;
function file(content: string | Buffer, name = `f${++n}.csv`): string {
  const p = path.join(dir, name);
  writeFileSync(p, content);
  return p;
}
const csv = async (text: string | Buffer, options = {}) =>
  parseCsv(file(text, "adeff.csv"), "adeff.csv", options);
const problems = (o: ParseOutcome) => (o.ok ? [] : o.problems);

describe("CSV reading", () => {
  it("detects comma, semicolon and tab from the header line, outside quotes", () => {
    expect(detectDelimiter("a,b,c")).toBe(",");
    expect(detectDelimiter("a;b;c")).toBe(";");
    expect(detectDelimiter("a\tb\tc")).toBe("\t");
    expect(detectDelimiter('"x;y",b,c')).toBe(",");
  });

  it("reads semicolon and tab files, a UTF-8 byte-order mark and RFC 4180 quotes", async () => {
    const semi = await csv('\uFEFFsubjid;arm;note\nS1;A;"two; parts"\nS2;B;"say ""hi""\nnext line"\n');
    expect(semi.ok).toBe(true);
    if (!semi.ok) return;
    expect(semi.dataset.names).toEqual(["subjid", "arm", "note"]);
    expect(semi.dataset.cells[2]).toEqual(["two; parts", 'say "hi"\nnext line']);
    const tab = await csv("subjid\tage\r\nS1\t40\r\nS2\t50\r\n");
    expect(tab.ok && tab.dataset.cells[1]).toEqual(["40", "50"]);
  });

  it("infers number, date, datetime and text and summarises each column", async () => {
    const o = await csv(
      "usubjid,age,visitdt,seen,arm\nS1,40,2025-01-02,2025-01-02T10:00,A\nS2,,2025-02-03,2025-02-03T11:30:00Z,B\nS3,50,,,A\nS4,NA,2025-03-04,2025-03-04T09:15,A\n",
    );
    expect(o.ok).toBe(true);
    if (!o.ok) return;
    const [id, age, dt, seen, arm] = o.dataset.columns;
    expect(o.dataset.keyColumns).toEqual(["usubjid"]);
    expect(id).toMatchObject({ type: "text", nonMissing: 4, missing: 0 });
    // age 40 and 50: mean 45, SD sqrt(50) = 7.0711 (sample SD, n - 1 divisor), worked by hand.
    expect(age).toMatchObject({ type: "number", nonMissing: 2, missing: 2, min: 40, max: 50, mean: 45 });
    expect(age.sd).toBeCloseTo(Math.sqrt(50), 12);
    expect(dt).toMatchObject({
      type: "date",
      nonMissing: 3,
      missing: 1,
      earliest: "2025-01-02",
      latest: "2025-03-04",
    });
    expect(seen.type).toBe("datetime");
    expect(arm.levels).toEqual([
      { value: "A", count: 3 },
      { value: "B", count: 1 },
    ]);
  });

  it("gives no levels for text with more than 50 distinct values", async () => {
    const lines = ["id,code"];
    for (let i = 0; i < 60; i++) lines.push(`S${i},C${i}`);
    const o = await csv(lines.join("\n"));
    expect(o.ok && o.dataset.columns[1].levels).toBeUndefined();
  });

  it("finds a composite key when subjects repeat by visit", async () => {
    const o = await csv("usubjid,avisit,aval\nS1,W1,1\nS1,W2,2\nS2,W1,3\n");
    expect(o.ok && o.dataset.keyColumns).toEqual(["usubjid", "avisit"]);
  });
});

describe("CSV refusals name the file, column and row", () => {
  it("ragged rows", async () => {
    expect(problems(await csv("a,b,c\n1,2,3\n4,5\n"))).toEqual([
      "adeff.csv: row 2 has 2 fields where the header has 3 columns. Check its quotes and separators.",
    ]);
  });

  it("invalid UTF-8", async () => {
    const bytes = Buffer.concat([
      Buffer.from("id,name\nS1,ok\nS2,"),
      Buffer.from([0xc3, 0x28]),
      Buffer.from("\n"),
    ]);
    expect(problems(await csv(bytes))).toEqual([
      "adeff.csv: line 3 (byte 18) is not valid UTF-8. Save the file as UTF-8 and upload it again.",
    ]);
  });

  it("duplicate column names", async () => {
    expect(problems(await csv("id,age,age\nS1,1,2\n"))).toEqual([
      'adeff.csv: the column name "age" is used twice (columns 2 and 3). Column names must be unique.',
    ]);
  });

  it("empty column names", async () => {
    expect(problems(await csv("id,,age\nS1,1,2\n"))).toEqual([
      "adeff.csv: column 2 has no name in the header row. Give every column a name.",
    ]);
  });

  it("no data rows", async () => {
    expect(problems(await csv("id,age\n"))).toEqual([
      "adeff.csv has a header row but no data rows. Upload the file with its data.",
    ]);
    expect(problems(await csv(""))).toEqual(["The file adeff.csv is empty."]);
  });

  it("duplicate keys", async () => {
    expect(problems(await csv("subjid,age\nS1,40\nS2,41\nS1,42\n"))).toEqual([
      'adeff.csv: duplicate key: rows 1 and 3 both have subjid = "S1". Each record must have its own key; remove the repeated record or name more key columns.',
    ]);
    expect(problems(await csv("subjid,age\nS1,40\n,41\n", { keyColumns: ["subjid"] }))).toEqual([
      'adeff.csv: key column "subjid", row 2: the key is missing. Every record needs its key.',
    ]);
  });

  it("a column declared numeric with text in it", async () => {
    expect(problems(await csv("subjid,age\nS1,40\nS2,forty\n", { numericColumns: ["age"] }))).toEqual([
      'adeff.csv: column "age", row 2: "forty" is text, but the column is declared numeric. Correct the value or leave the cell empty for missing.',
    ]);
  });

  it("cells over the size limit", async () => {
    expect(problems(await csv(`subjid,note\nS1,${"x".repeat(10_001)}\n`))).toEqual([
      'adeff.csv: column "note", row 1: the cell has 10001 characters; the limit is 10000. Shorten it or leave free text out of the analysis dataset.',
    ]);
  });

  it("an unclosed quote", async () => {
    const p = problems(await csv('subjid,note\nS1,"open\n'));
    expect(p).toHaveLength(1);
    expect(p[0]).toMatch(/^adeff\.csv: line \d+: .*quote.* Check the quotes on that line\.$/i);
  });
});

function datasetJson(
  over: Record<string, unknown> = {},
  rows: unknown[][] = [
    ["S1", 40, "1.5", "2025-01-02"],
    ["S2", null, "2.25", null],
  ],
) {
  return JSON.stringify({
    datasetJSONCreationDateTime: "2026-11-30T10:00:00",
    datasetJSONVersion: "1.1.0",
    itemGroupOID: "IG.ADSL",
    records: rows.length,
    name: "ADSL",
    label: "Subject-level analysis dataset",
    columns: [
      {
        itemOID: "IT.ADSL.USUBJID",
        name: "USUBJID",
        label: "Unique subject identifier",
        dataType: "string",
        keySequence: 1,
      },
      { itemOID: "IT.ADSL.AGE", name: "AGE", label: "Age", dataType: "integer" },
      { itemOID: "IT.ADSL.BMI", name: "BMI", label: "Body-mass index", dataType: "decimal" },
      { itemOID: "IT.ADSL.RANDDT", name: "RANDDT", label: "Date of randomisation", dataType: "date" },
    ],
    rows,
    ...over,
  });
}
const dj = async (text: string) => parseDatasetJson(file(text, "adsl.json"), "adsl.json");

describe("Dataset-JSON v1.1", () => {
  it("keeps column names, labels and declared types, and takes the key from keySequence", async () => {
    const o = await dj(datasetJson());
    expect(o.ok).toBe(true);
    if (!o.ok) return;
    expect(o.dataset.columns.map((c) => [c.name, c.label, c.type])).toEqual([
      ["USUBJID", "Unique subject identifier", "text"],
      ["AGE", "Age", "number"],
      ["BMI", "Body-mass index", "number"],
      ["RANDDT", "Date of randomisation", "date"],
    ]);
    expect(o.dataset.cells[1]).toEqual(["40", ""]);
    expect(o.dataset.cells[2]).toEqual(["1.5", "2.25"]);
    expect(o.dataset.keyColumns).toEqual(["USUBJID"]);
  });

  it("refuses a file that does not follow the standard's structure", async () => {
    const noRows = JSON.parse(datasetJson()) as Record<string, unknown>;
    delete noRows.rows;
    expect(problems(await dj(JSON.stringify(noRows)))).toEqual([
      'adsl.json does not follow Dataset-JSON v1.1: the required attribute "rows" is missing.',
    ]);
    expect(problems(await dj(datasetJson({ datasetJSONVersion: "1.0.0" })))).toEqual([
      "adsl.json is Dataset-JSON version 1.0.0; Plumbline reads version 1.1, whose structure differs. Convert the file to Dataset-JSON v1.1 (or export the dataset again as v1.1) and upload that.",
    ]);
    expect(problems(await dj(datasetJson({ datasetJSONVersion: "2.0" })))).toEqual([
      'adsl.json does not follow Dataset-JSON v1.1: "datasetJSONVersion" is "2.0"; Plumbline reads version 1.1.',
    ]);
    expect(problems(await dj(datasetJson({ records: 5 })))).toEqual([
      'adsl.json does not follow Dataset-JSON v1.1: "records" says 5 rows but "rows" holds 2.',
    ]);
    expect(problems(await dj("[1,2]"))).toEqual([
      "adsl.json does not follow Dataset-JSON v1.1: the file must hold one JSON object.",
    ]);
    expect(problems(await dj("{ not json"))[0]).toMatch(
      /^adsl\.json is not valid JSON \(.+\)\. Export it again as Dataset-JSON\.$/,
    );
    const badType = datasetJson({
      columns: [{ itemOID: "IT.X", name: "X", label: "X", dataType: "number" }],
      rows: [[1]],
      records: 1,
    });
    expect(problems(await dj(badType))[0]).toBe(
      'adsl.json does not follow Dataset-JSON v1.1: columns[0] ("X") has dataType "number"; allowed are string, integer, decimal, float, double, boolean, datetime, date, time, URI.',
    );
  });

  it("refuses text in a column declared numeric, ragged rows and duplicate keys", async () => {
    expect(problems(await dj(datasetJson({}, [["S1", "forty", "1.5", null]])))).toEqual([
      `adsl.json: 1 cell in column "AGE" declared integer is not a number; first: row 1 'forty'. Correct the file, or read this column by its values (upload option, with a reason for the audit trail).`,
    ]);
    expect(problems(await dj(datasetJson({}, [["S1", 40, "1.5"]])))).toEqual([
      'adsl.json: row 1 has 3 values where "columns" lists 4. Export the file again.',
    ]);
    expect(
      problems(
        await dj(
          datasetJson({}, [
            ["S1", 40, "1.5", null],
            ["S1", 41, "1.5", null],
          ]),
        ),
      ),
    ).toEqual([
      'adsl.json: duplicate key: rows 1 and 2 both have USUBJID = "S1". Each record must have its own key; remove the repeated record or name more key columns.',
    ]);
  });
});
