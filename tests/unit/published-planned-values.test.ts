/**
 * Published values in the plan editor: the rows as posted (gaps from removed rows closed), each
 * refused beside its field with a message naming the problem, stored in the model specification
 * when valid, read back into the editor, and named in the comparison of two plan versions.
 */
import { useTempDatabase } from "../support/temp-db";
useTempDatabase();
import { describe, expect, it } from "vitest";
const { readPlannedModelForm, toForm, validatePlannedModel } = await import("~/.server/plans/planned-model");
const { comparePlanVersions } = await import("~/.server/plans/plan-diff");

const dataset = {
  name: "adeff",
  columns: [
    { name: "chg", label: null, type: "number" as const, nonMissing: 9, missing: 0, min: -9, max: 5 },
    { name: "base", label: null, type: "number" as const, nonMissing: 9, missing: 0, min: 10, max: 30 },
    {
      name: "arm",
      label: null,
      type: "text" as const,
      nonMissing: 9,
      missing: 0,
      levels: ["High", "Low", "Placebo"].map((value) => ({ value, count: 3 })),
    },
    {
      name: "sex",
      label: null,
      type: "text" as const,
      nonMissing: 9,
      missing: 0,
      levels: ["F", "M"].map((value) => ({ value, count: 5 })),
    },
  ],
};

function form(rows: Record<number, Record<string, string>>, family = "gaussian") {
  const f = new FormData();
  for (const [k, v] of Object.entries({
    key: "primary",
    title: "Primary model",
    datasetName: "adeff",
    response: "chg",
    family,
    treatment: "arm",
    treatmentReference: "Placebo",
  }))
    f.set(k, v);
  f.append("covariate", "base");
  f.append("covariate", "sex");
  for (const [i, row] of Object.entries(rows))
    for (const [k, v] of Object.entries(row)) f.set(`published:${i}:${k}`, v);
  return readPlannedModelForm(f);
}

describe("published values in the plan editor", () => {
  it("are stored in the model specification, rows numbered again after a removed one", () => {
    const v = validatePlannedModel(
      form({
        0: { quantity: "contrast", level: "High", statistic: "estimate", value: " -2.35 " },
        // row 1 was removed in the browser
        2: { quantity: "contrast", level: "Low", reference: "High", statistic: "p", value: "<0.001" },
        3: { quantity: "mean", level: "Placebo", statistic: "se", value: "0.41" },
        5: { quantity: "coefficient", variable: "sex", level: "M", statistic: "upper", value: "1.20" },
        6: { quantity: "coefficient", variable: "base", statistic: "estimate", value: "−0.183" },
      }),
      [dataset],
      [],
    );
    expect(v.ok ? [] : v.errors).toEqual([]);
    if (!v.ok || v.model.spec.family === "cox") return;
    expect(v.model.spec.published).toEqual([
      { quantity: "contrast", level: "High", statistic: "estimate", value: "-2.35" },
      { quantity: "contrast", level: "Low", reference: "High", statistic: "p", value: "<0.001" },
      { quantity: "mean", level: "Placebo", statistic: "se", value: "0.41" },
      { quantity: "coefficient", term: [{ variable: "sex", level: "M" }], statistic: "upper", value: "1.20" },
      { quantity: "coefficient", term: [{ variable: "base" }], statistic: "estimate", value: "−0.183" },
    ]);
    // the editor gets the same rows back
    expect(toForm(v.model).published.map((r) => [r.quantity, r.level, r.variable, r.value])).toEqual([
      ["contrast", "High", "", "-2.35"],
      ["contrast", "Low", "", "<0.001"],
      ["mean", "Placebo", "", "0.41"],
      ["coefficient", "M", "sex", "1.20"],
      ["coefficient", "", "base", "−0.183"],
    ]);
  });

  it("refuse each bad row beside its field, naming the problem", () => {
    const v = validatePlannedModel(
      form({
        0: { quantity: "contrast", level: "Placebo", statistic: "estimate", value: "1.0" },
        1: { quantity: "contrast", level: "Medium", statistic: "estimate", value: "1.0" },
        2: { quantity: "mean", level: "High", statistic: "p", value: "0.04" },
        3: { quantity: "coefficient", variable: "sex", statistic: "estimate", value: "0.5" },
        4: { quantity: "coefficient", variable: "base", level: "M", statistic: "estimate", value: "0.5" },
        5: { quantity: "coefficient", variable: "age", statistic: "estimate", value: "0.5" },
        6: { quantity: "contrast", level: "High", statistic: "estimate", value: "" },
        7: { quantity: "contrast", level: "High", statistic: "estimate", value: "1,5" },
        8: { quantity: "contrast", level: "High", statistic: "se", value: "<0.01" },
      }),
      [dataset],
      [],
    );
    expect(v.ok).toBe(false);
    if (v.ok) return;
    expect(v.errors).toMatchObject({
      "published:0:level": "Choose an arm other than the one it is compared with.",
      "published:1:level": '"Medium" is not an arm of arm; the arms are High, Low, Placebo.',
      "published:2:statistic": "An adjusted mean has no p-value: choose the estimate, its SE or a CI bound.",
      "published:3:level": "sex is categorical: give the level whose coefficient was printed.",
      "published:4:level": "base is continuous: leave the level empty.",
      "published:5:variable": "age is not a term of this model.",
      "published:6:value": "Give the value exactly as the report printed it, e.g. -2.35 or <0.001.",
      "published:7:value": expect.stringMatching(/^Write the value as printed/),
      "published:8:value": expect.stringMatching(/^Only a p-value may be printed as a bound/),
    });
  });

  it("a generalized linear model's contrast names its measure", () => {
    const v = validatePlannedModel(
      form({ 0: { quantity: "contrast", level: "High", statistic: "estimate", value: "0.12" } }, "poisson"),
      [dataset],
      [],
    );
    expect(v.ok ? {} : v.errors).toMatchObject({
      "published:0:measure": "Choose the measure printed: rate ratio.",
    });
  });

  it("a changed value is a change of the plan, named in the version comparison", () => {
    const model = (value: string) => {
      const v = validatePlannedModel(
        form({ 0: { quantity: "contrast", level: "High", statistic: "estimate", value } }),
        [dataset],
        [],
      );
      if (!v.ok) throw new Error(JSON.stringify(v.errors));
      return v.model;
    };
    const header = { title: "Plan", sapName: null, sapVersion: null, sapDate: null };
    expect(
      comparePlanVersions({ header, models: [model("-2.35")] }, { header, models: [model("-2.53")] }).map(
        (c) => c.what,
      ),
    ).toEqual([
      "Published value added: contrast High vs the reference arm, estimate printed as -2.53",
      "Published value removed: contrast High vs the reference arm, estimate printed as -2.35",
    ]);
  });
});
