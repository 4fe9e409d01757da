/**
 * CDISC's public example datasets (tests/fixtures/cdisc/, see its README for the source) read
 * through the upload's parse step and through the headless `inspect` command: labels, dates
 * and key as the files declare them. The transport files are compared cell for cell with R's
 * haven::read_xpt (reference JSON written by tests/fixtures/cdisc/generate-xpt-reference.R).
 */
import { execFile } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { parseDatasetFile, type ParsedDataset } from "~/.server/datasets/parse.server";
import { formatOf, type DatasetFormat } from "~/engine-io/dataset/read";

const ROOT = join(import.meta.dirname, "..", "..");
const CDISC = join(ROOT, "tests", "fixtures", "cdisc");
const TSX = join(ROOT, "node_modules", ".bin", "tsx");

async function parse(name: string): Promise<ParsedDataset> {
  const path = join(CDISC, name);
  const format: DatasetFormat = formatOf(name, readFileSync(path).subarray(0, 80));
  const outcome = await parseDatasetFile(path, name.split("/").pop() as string, format);
  if (!outcome.ok) throw new Error(outcome.problems.join("\n"));
  return outcome.dataset;
}

interface DeclaredColumn {
  name: string;
  label: string;
  dataType: string;
  keySequence?: number;
  displayFormat?: string;
}
function declared(name: string): { label: string; columns: DeclaredColumn[]; rows: unknown[][] } {
  return JSON.parse(readFileSync(join(CDISC, name), "utf8"));
}
const col = (d: ParsedDataset, name: string) => d.columns[d.names.indexOf(name)];
const cells = (d: ParsedDataset, name: string) => d.cells[d.names.indexOf(name)];

function runCli(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(TSX, [join(ROOT, "app", "cli.ts"), ...args], { cwd: ROOT }, (err, stdout, stderr) => {
      resolve({ code: err ? (typeof err.code === "number" ? err.code : 1) : 0, stdout, stderr });
    });
  });
}

describe("CDISC Dataset-JSON v1.1 examples through the parse step", () => {
  it("adsl.json: labels, declared types, date-only values in datetime columns, key from keySequence", async () => {
    const d = await parse("adsl.json");
    const file = declared("adsl.json");
    expect(d.format).toBe("dataset-json");
    expect(d.rowNumbers).toHaveLength(254);
    expect(d.datasetLabel).toBe("Subject-Level Analysis");
    expect(d.columns.map((c) => [c.name, c.label, c.declaredType])).toEqual(
      file.columns.map((c) => [c.name, c.label, c.dataType]),
    );
    expect(d.keyColumns).toEqual(["USUBJID"]);
    expect(d.keySource).toBe("file");
    // RFSTDTC is declared datetime and holds dates only (CDISC's file): kept as text, typed datetime, precision day.
    expect(col(d, "RFSTDTC")).toMatchObject({
      type: "datetime",
      valueType: "datetime",
      precision: { day: 254 },
    });
    expect(cells(d, "RFSTDTC")[0]).toBe("2014-01-02");
    expect(col(d, "TRTSDT")).toMatchObject({ type: "date", declaredType: "date", format: "DATE9." });
    expect(col(d, "AGE")).toMatchObject({ type: "number", valueType: "integer", label: "Age" });
    expect(cells(d, "AGE").slice(0, 3)).toEqual(["63", "64", "71"]);
  });

  it("adsl.ndjson (the NDJSON form) reads to the same table as adsl.json", async () => {
    const [json, nd] = await Promise.all([parse("adsl.json"), parse("adsl.ndjson")]);
    expect(nd.names).toEqual(json.names);
    expect(nd.cells).toEqual(json.cells);
    expect(nd.columns).toEqual(json.columns);
    expect(nd.keyColumns).toEqual(["USUBJID"]);
  });

  it("dm.json: year-only birth dates are valid partial dates; composite key STUDYID, USUBJID", async () => {
    const d = await parse("dm.json");
    expect(d.keyColumns).toEqual(["STUDYID", "USUBJID"]);
    expect(col(d, "BRTHDTC")).toMatchObject({
      label: "Date/Time of Birth",
      type: "date",
      precision: { year: 18 },
    });
    expect(cells(d, "BRTHDTC")[0]).toBe("1928");
    expect(col(d, "RFSTDTC").missing).toBe(cells(d, "RFSTDTC").filter((c) => c === "").length);
  });

  it("ae.json: the declared five-column key holds, although AEDECOD is empty in every record", async () => {
    const d = await parse("ae.json");
    const file = declared("ae.json");
    const key = file.columns
      .filter((c) => c.keySequence !== undefined)
      .sort((a, b) => (a.keySequence as number) - (b.keySequence as number))
      .map((c) => c.name);
    expect(key).toEqual(["STUDYID", "USUBJID", "AEDECOD", "AESTDTC", "AELNKID"]);
    expect(d.keyColumns).toEqual(key);
    expect(d.rowNumbers).toHaveLength(74);
    expect(col(d, "AESTDTC")).toMatchObject({ type: "date", label: "Start Date/Time of Adverse Event" });
  });

  it("v1.0/adsl.json gets one message naming the version and what to do", async () => {
    const outcome = await parseDatasetFile(join(CDISC, "v1.0", "adsl.json"), "adsl.json", "dataset-json");
    expect(outcome.ok).toBe(false);
    if (outcome.ok) return;
    expect(outcome.problems).toEqual([
      "adsl.json is Dataset-JSON version 1.0.0; Plumbline reads version 1.1, whose structure differs. Convert the file to Dataset-JSON v1.1 (or export the dataset again as v1.1) and upload that.",
    ]);
  });
});

interface HavenColumn {
  name: string;
  label: string | null;
  format: string | null;
  type: "Num" | "Char";
  cells: (number | string | null)[];
}

describe("CDISC transport files (.xpt) against R's haven::read_xpt", () => {
  for (const name of ["adsl", "adae", "dm"]) {
    it(`${name}.xpt: names, labels, formats, dataset label and every cell as haven reads them`, async () => {
      const ref = JSON.parse(readFileSync(join(CDISC, "xpt-reference", `${name}.json`), "utf8")) as {
        label: string | null;
        rows: number;
        columns: HavenColumn[];
      };
      const d = await parse(`${name}.xpt`);
      expect(d.format).toBe("xpt");
      expect(d.rowNumbers).toHaveLength(ref.rows);
      if (ref.label !== null) expect(d.datasetLabel).toBe(ref.label);
      expect(d.names).toEqual(ref.columns.map((c) => c.name));
      expect(d.columns.map((c) => c.label)).toEqual(ref.columns.map((c) => c.label));
      expect(d.columns.map((c) => c.format?.replace(/\.$/, "") ?? null)).toEqual(
        ref.columns.map((c) => c.format),
      );
      expect(d.columns.map((c) => c.declaredType)).toEqual(ref.columns.map((c) => c.type));
      let compared = 0;
      ref.columns.forEach((rc, j) => {
        const ours = d.cells[j];
        rc.cells.forEach((want, i) => {
          const got = ours[i];
          if (want === null || want === "") expect(got, `${rc.name} row ${i + 1}`).toBe("");
          else if (typeof want === "number") expect(Number(got), `${rc.name} row ${i + 1}`).toBe(want);
          else expect(got, `${rc.name} row ${i + 1}`).toBe(want);
          compared++;
        });
      });
      expect(compared).toBe(ref.rows * ref.columns.length);
    });
  }

  it("adsl.xpt: DATE9. numbers become ISO 8601 dates, the key is detected, labels kept", async () => {
    const d = await parse("adsl.xpt");
    expect(col(d, "TRTSDT")).toMatchObject({
      type: "date",
      valueType: "date",
      format: "DATE9.",
      label: "Date of First Exposure to Treatment",
    });
    // Same subject, same date as CDISC's Dataset-JSON file of the same dataset.
    const json = await parse("adsl.json");
    expect(cells(d, "TRTSDT")).toEqual(cells(json, "TRTSDT"));
    expect(d.keyColumns).toEqual(["USUBJID"]);
  });

  it("dm.xpt: character ISO 8601 dates (--DTC), partial ones included, are typed as dates", async () => {
    const d = await parse("dm.xpt");
    expect(col(d, "BRTHDTC")).toMatchObject({ type: "date", precision: { year: 18 } });
    expect(col(d, "RFSTDTC").type).toBe("date");
  });
});

describe("inspect on every example file", () => {
  const files: {
    file: string;
    format: string;
    rows: number;
    key: string[];
    dateColumn: [string, string, string];
  }[] = [
    {
      file: "adsl.json",
      format: "dataset-json",
      rows: 254,
      key: ["USUBJID"],
      dateColumn: ["RFSTDTC", "Subject Reference Start Date/Time", "datetime"],
    },
    {
      file: "adsl.ndjson",
      format: "dataset-json",
      rows: 254,
      key: ["USUBJID"],
      dateColumn: ["TRTSDT", "Date of First Exposure to Treatment", "date"],
    },
    {
      file: "dm.json",
      format: "dataset-json",
      rows: 18,
      key: ["STUDYID", "USUBJID"],
      dateColumn: ["BRTHDTC", "Date/Time of Birth", "date"],
    },
    {
      file: "ae.json",
      format: "dataset-json",
      rows: 74,
      key: ["STUDYID", "USUBJID", "AEDECOD", "AESTDTC", "AELNKID"],
      dateColumn: ["AESTDTC", "Start Date/Time of Adverse Event", "date"],
    },
    {
      file: "adsl.xpt",
      format: "xpt",
      rows: 254,
      key: ["USUBJID"],
      dateColumn: ["TRTSDT", "Date of First Exposure to Treatment", "date"],
    },
    {
      file: "adae.xpt",
      format: "xpt",
      rows: 1191,
      key: ["USUBJID", "AESEQ"],
      dateColumn: ["ASTDT", "Analysis Start Date", "date"],
    },
    {
      file: "dm.xpt",
      format: "xpt",
      rows: 18,
      key: ["USUBJID"],
      dateColumn: ["BRTHDTC", "Date/Time of Birth", "date"],
    },
  ];

  it("prints one JSON object with format, rows, labelled and typed columns and the key; exit 0", async () => {
    const runs = await Promise.all(files.map((f) => runCli(["inspect", "--data", join(CDISC, f.file)])));
    runs.forEach((run, k) => {
      const f = files[k];
      expect(run.code, run.stderr).toBe(0);
      expect(run.stdout.trim().split("\n")).toHaveLength(1);
      const out = JSON.parse(run.stdout) as {
        format: string;
        rows: number;
        columns: { name: string; label: string | null; type: string }[];
        key: string[];
        problems: unknown[];
      };
      expect(Object.keys(out)).toEqual(["format", "rows", "columns", "key", "problems"]);
      expect(out).toMatchObject({ format: f.format, rows: f.rows, key: f.key });
      const [name, label, type] = f.dateColumn;
      expect(out.columns.find((c) => c.name === name)).toEqual({ name, label, type });
      for (const c of out.columns)
        expect(["number", "integer", "text", "date", "datetime", "time"]).toContain(c.type);
      expect(out.columns.find((c) => c.name === "USUBJID")?.label).toBe("Unique Subject Identifier");
    });
  });

  it("refuses the v1.0 file with exit 2 and one error line", async () => {
    const run = await runCli(["inspect", "--data", join(CDISC, "v1.0", "adsl.json")]);
    expect(run.code).toBe(2);
    expect(run.stdout).toBe("");
    expect(run.stderr.trim().split("\n")).toHaveLength(1);
    expect(run.stderr).toMatch(
      /^error: adsl\.json is Dataset-JSON version 1\.0\.0; .*Convert the file to Dataset-JSON v1\.1/,
    );
  });
});

describe("fit on the example files", () => {
  it("fits the same model to adsl.xpt, adsl.json and adsl.ndjson with identical results (one typing for every format)", async () => {
    const scratch = mkdtempSync(join(tmpdir(), "plumbline-cdisc-"));
    const model = join(scratch, "adsl-weight-model.json");
    writeFileSync(
      model,
      JSON.stringify({
        response: "WEIGHTBL",
        terms: [{ variable: "HEIGHTBL" }, { variable: "SEX", reference: "F" }, { variable: "AGE" }],
        id: "USUBJID",
      }),
    );
    const runs = await Promise.all(
      ["adsl.xpt", "adsl.json", "adsl.ndjson"].map((f) =>
        runCli(["fit", "--data", join(CDISC, f), "--model", model]),
      ),
    );
    for (const run of runs) expect(run.code, run.stderr).toBe(0);
    const [xpt, json, nd] = runs.map(
      (r) =>
        JSON.parse(r.stdout) as {
          n: number;
          excluded: number;
          coefficients: { name: string; estimate: number }[];
        },
    );
    // 254 subjects, one without a baseline weight (CDISC's file).
    expect(xpt.n).toBe(253);
    expect(xpt.coefficients.map((c) => c.name)).toEqual(json.coefficients.map((c) => c.name));
    expect(xpt.coefficients).toEqual(json.coefficients);
    expect(nd.coefficients).toEqual(json.coefficients);
  });
});
