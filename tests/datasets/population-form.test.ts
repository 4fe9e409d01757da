// The editor's population conditions: read from the posted fields (and from the single
// "population flag = value" fields of scripts written before conditions), checked against the
// locked version's columns with a message naming the column and the value, and built into the
// specification's conditions. The rows they select are checked against R in
// tests/reference/sap-reference.test.ts.
import { describe, expect, it } from "vitest";
import type { ColumnMeta } from "~/.server/datasets/catalog.server";
import { populationFormOf, readPopulationForm, validatePopulation } from "~/.server/plans/population-form";
import {
  legacyPopulationSchema,
  plannedModelSchema,
  populationOf,
  withLegacyPopulation,
} from "~/.server/plans/planned-model";

const col = (name: string, type: ColumnMeta["type"], levels?: string[]): ColumnMeta => ({
  name,
  label: null,
  type,
  nonMissing: 10,
  missing: 0,
  ...(levels ? { levels: levels.map((value) => ({ value, count: 1 })) } : {}),
});
const dataset = {
  name: "adqs",
  columns: [
    col("EFFFL", "text", ["Y"]),
    col("PARAMCD", "text", ["ACTOT", "PAIN"]),
    col("AVISITN", "number", ["0", "12", "24"]),
    col("AGE", "number"),
    col("USUBJID", "text"),
  ],
};

function form(fields: [string, string][]): FormData {
  const f = new FormData();
  for (const [k, v] of fields) f.append(k, v);
  return f;
}

describe("population conditions from the editor", () => {
  it("builds in, not-in and range conditions; numbers as numbers on numeric columns; typed values on a column without levels", () => {
    const rows = readPopulationForm(
      form([
        ["population:0:column", "EFFFL"],
        ["population:0:kind", "in"],
        ["population:0:value", "Y"],
        ["population:1:column", "AVISITN"],
        ["population:1:kind", "in"],
        ["population:1:value", "24"],
        ["population:2:column", "AGE"],
        ["population:2:kind", "range"],
        ["population:2:min", "18"],
        ["population:2:max", ""],
        ["population:3:column", "USUBJID"],
        ["population:3:kind", "notIn"],
        ["population:3:text", "A-1, A-2"],
      ]),
    );
    const errors: Record<string, string> = {};
    const conditions = validatePopulation(rows, dataset, errors);
    expect(errors).toEqual({});
    expect(conditions).toEqual([
      { column: "EFFFL", in: ["Y"] },
      { column: "AVISITN", in: [24] },
      { column: "AGE", min: 18 },
      { column: "USUBJID", notIn: ["A-1", "A-2"] },
    ]);
    expect(validatePopulation(populationFormOf(conditions), dataset, {})).toEqual(conditions);
  });

  it("names the column and the value that cannot be used, beside the condition's field", () => {
    const errors: Record<string, string> = {};
    validatePopulation(
      [
        { column: "VISIT", kind: "in", values: ["1"], min: "", max: "" },
        { column: "PARAMCD", kind: "in", values: ["ACTOT", "QOL"], min: "", max: "" },
        { column: "PARAMCD", kind: "range", values: [], min: "1", max: "" },
        { column: "AGE", kind: "range", values: [], min: "65", max: "18" },
        { column: "AVISITN", kind: "notIn", values: ["week 4"], min: "", max: "" },
        { column: "EFFFL", kind: "in", values: [], min: "", max: "" },
      ],
      dataset,
      errors,
    );
    expect(errors).toEqual({
      "population:0:column": 'Column "VISIT" is not in adqs.',
      "population:1:values": 'PARAMCD has no value "QOL"; its values are ACTOT, PAIN.',
      "population:2:range":
        "PARAMCD is text, not numeric: a range needs a numeric column; choose values instead.",
      "population:3:range": "The lowest value (65) is above the highest (18).",
      "population:4:values": 'AVISITN is numeric; "week 4" is not a number.',
      "population:5:values": "Choose or type the values of EFFFL that define the population.",
    });
  });

  it("reads the single flag = value fields of older scripts as one condition", () => {
    expect(
      readPopulationForm(
        form([
          ["populationColumn", "EFFFL"],
          ["populationValue", "Y"],
        ]),
      ),
    ).toEqual([{ column: "EFFFL", kind: "in", values: ["Y"], min: "", max: "" }]);
  });
});

describe("plans stored before population conditions", () => {
  it("carry their one column = value into the specification as an in condition, as plans.server.ts reads them", () => {
    const spec = {
      response: "chg",
      family: "gaussian",
      terms: [{ variable: "arm", categorical: true }],
      treatment: "arm",
    };
    const stored = plannedModelSchema.parse({
      key: "primary",
      title: "Primary",
      datasetName: "adeff",
      spec: withLegacyPopulation(
        spec as never,
        legacyPopulationSchema.parse({ column: "fasfl", value: "Y" }),
      ),
      checks: [],
      sensitivity: [],
    });
    expect(populationOf(stored)).toEqual([{ column: "fasfl", in: ["Y"] }]);
    // a specification that already states its population keeps it
    expect(
      withLegacyPopulation({ population: [{ column: "EFFFL", in: ["Y"] }] }, { column: "fasfl", value: "Y" })
        .population,
    ).toEqual([{ column: "EFFFL", in: ["Y"] }]);
    expect(withLegacyPopulation({}, null)).toEqual({});
  });
});
