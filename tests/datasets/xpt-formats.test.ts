/**
 * The XPORT reader on small invented transport files written by R's haven::write_xpt (an
 * independent writer; tests/fixtures/xpt/generate.R): DATE9., DATETIME20. and TIME8. numbers
 * become the ISO 8601 values R reads back (tests/fixtures/xpt/datetimes.json), missing values
 * stay missing, and a version 8 file gets one clear message.
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { parseDatasetFile } from "~/.server/datasets/parse.server";

const DIR = path.join(import.meta.dirname, "..", "fixtures", "xpt");
const ref = JSON.parse(readFileSync(path.join(DIR, "datetimes.json"), "utf8")) as Record<
  string,
  (string | number | null)[]
> & { label: string; formats: (string | null)[] };

describe("XPORT dates, datetimes and times", () => {
  it("turns day and second counts into ISO 8601 as R reads them, keeping labels and formats", async () => {
    const o = await parseDatasetFile(path.join(DIR, "datetimes.xpt"), "datetimes.xpt", "xpt", {
      keyColumns: ["SUBJ"],
    });
    expect(o.ok, o.ok ? "" : o.problems.join("\n")).toBe(true);
    if (!o.ok) return;
    const d = o.dataset;
    expect(d.datasetLabel).toBe(ref.label);
    expect(d.columns.map((c) => c.format?.replace(/\.$/, "") ?? null)).toEqual(ref.formats);
    expect(d.columns.map((c) => [c.name, c.valueType])).toEqual([
      ["SUBJ", "text"],
      ["VISDT", "date"],
      ["VISDTM", "datetime"],
      ["VISTM", "time"],
      ["DOSE", "number"],
    ]);
    expect(d.columns.map((c) => c.label)).toEqual([
      "Invented subject code",
      "Visit date",
      "Visit date and time",
      "Visit time",
      "Dose (mg)",
    ]);
    for (const name of ["SUBJ", "VISDT", "VISDTM", "VISTM"]) {
      expect(d.cells[d.names.indexOf(name)], name).toEqual(
        ref[name].map((v) => (v === null ? "" : String(v))),
      );
    }
    expect(d.cells[d.names.indexOf("DOSE")].map((c) => (c === "" ? null : Number(c)))).toEqual(ref.DOSE);
    expect(d.columns[2]).toMatchObject({
      type: "datetime",
      precision: { second: 3 },
      earliest: "1960-01-01T00:00:00",
      latest: "2024-02-29T23:59:59",
    });
  });

  it("refuses a version 8 transport file with one message saying what to do", async () => {
    const o = await parseDatasetFile(path.join(DIR, "v8.xpt"), "v8.xpt", "xpt");
    expect(o.ok ? [] : o.problems).toEqual([
      "v8.xpt is an XPORT version 8 transport file; Plumbline reads version 5, the version submitted datasets use. Export the dataset again as XPORT version 5 (or as Dataset-JSON v1.1) and upload that.",
    ]);
  });
});
