/**
 * Numeric columns that look categorical (app/.server/datasets/categorical-hint.ts) and the plan
 * editor's rule that such a covariate needs an explicit choice. The data are the invented pooled
 * site group of tests/engine/coded-site-group (whose effect on the p-value is checked against R there).
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { categoricalHints } from "~/.server/datasets/categorical-hint";
import { inferType, summariseColumn, type ColumnMeta } from "~/.server/datasets/column-summary";
import { readPlannedModelForm, validatePlannedModel } from "~/.server/plans/planned-model";
import { readCsvText } from "~/engine-io/read-csv";

const table = readCsvText(
  readFileSync(join(import.meta.dirname, "..", "engine", "coded-site-group", "data.csv"), "utf8"),
);
const columns: ColumnMeta[] = Object.entries(table.columns).map(([name, cells]) =>
  summariseColumn(name, null, inferType(cells), cells),
);

const meta = (name: string, cells: string[], label: string | null = null) =>
  summariseColumn(name, label, inferType(cells), cells);
const spread = (k: number) => Array.from({ length: k }, (_, i) => String(i * 3 + 1));

describe("columns that look categorical", () => {
  it("a numeric-coded pooled site group (701, 703, …) looks categorical, with its levels counted", () => {
    const site = columns.find((c) => c.name === "sitegr1");
    expect(site?.type).toBe("number");
    expect(site?.levels?.map((l) => l.value)).toEqual(["701", "703", "704", "708", "709", "710"]);
    const hints = categoricalHints(columns);
    expect(hints.get("sitegr1")).toBe("6 distinct whole-number values");
    expect(hints.has("base")).toBe(false);
    expect(hints.has("chg")).toBe(false);
  });

  it("by few whole numbers (at most 12), by name (flag, group, code, numeric twin) and by label", () => {
    const cols = [
      meta("score12", spread(12)),
      meta("score13", spread(13)),
      meta("halves", ["0.5", "1", "1.5"]),
      meta("SAFFL", spread(20)),
      meta("AGEGR1N", spread(20)),
      meta("ARMCD", spread(20)),
      meta("site_group", spread(20)),
      meta("AVISIT", ["Week 1", "Week 2"]),
      meta("AVISITN", spread(20)),
      meta("HEMOGLOBIN", spread(20)),
      meta("REGION1", spread(20), "Pooled Region Group 1"),
      meta("WEIGHT", spread(20), "Weight (kg)"),
    ];
    const hints = categoricalHints(cols);
    expect([...hints.keys()]).toEqual([
      "score12",
      "SAFFL",
      "AGEGR1N",
      "ARMCD",
      "site_group",
      "AVISITN",
      "REGION1",
    ]);
    expect(hints.get("AVISITN")).toBe("numeric codes of AVISIT");
    expect(hints.get("REGION1")).toBe("its label says group");
  });
});

describe("plan editor: a column that looks categorical needs an explicit choice", () => {
  const datasets = [{ name: "adeff", columns }];
  const form = (extra: Record<string, string> = {}) => {
    const f = new FormData();
    for (const [k, v] of Object.entries({
      key: "primary",
      title: "Primary efficacy",
      datasetName: "adeff",
      response: "chg",
      family: "gaussian",
      treatment: "arm",
      treatmentReference: "Placebo",
      ...extra,
    }))
      f.set(k, v);
    f.append("covariate", "base");
    f.append("covariate", "sitegr1");
    return readPlannedModelForm(f);
  };

  it("refuses the model without a choice, with the error beside the covariate, and never defaults to continuous", () => {
    const result = validatePlannedModel(form(), datasets, []);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.errors["covariate:sitegr1"]).toBe(
      "sitegr1 looks categorical (6 distinct whole-number values): choose whether it enters the model as categorical or continuous.",
    );
    expect(result.errors["covariate:base"]).toBeUndefined();
  });

  it("refuses an alternative covariate set that would bring in such a column with no choice made", () => {
    const f = new FormData();
    for (const [k, v] of Object.entries({
      key: "primary",
      title: "Primary efficacy",
      datasetName: "adeff",
      response: "chg",
      family: "gaussian",
      treatment: "arm",
      treatmentReference: "Placebo",
    }))
      f.set(k, v);
    f.append("covariate", "base");
    f.set("sensitivity:alternative_covariates", "on");
    f.append("sensitivity:covariate", "sitegr1");
    const result = validatePlannedModel(readPlannedModelForm(f), datasets, []);
    expect(result.ok).toBe(false);
    if (!result.ok)
      expect(result.errors["sensitivity:covariate"]).toMatch(
        /^sitegr1 looks categorical and is not in the main model/,
      );
  });

  it("keeps the explicit choice in the stored terms", () => {
    const asCategorical = validatePlannedModel(
      form({ "as:sitegr1": "categorical", "reference:sitegr1": "703" }),
      datasets,
      [],
    );
    expect(
      asCategorical.ok &&
        asCategorical.model.spec.terms.find((t) => "variable" in t && t.variable === "sitegr1"),
    ).toEqual({ variable: "sitegr1", categorical: true, reference: "703" });
    const asContinuous = validatePlannedModel(form({ "as:sitegr1": "continuous" }), datasets, []);
    expect(
      asContinuous.ok &&
        asContinuous.model.spec.terms.find((t) => "variable" in t && t.variable === "sitegr1"),
    ).toEqual({ variable: "sitegr1", categorical: false });
    expect(
      asContinuous.ok && asContinuous.model.spec.terms.find((t) => "variable" in t && t.variable === "base"),
    ).toEqual({ variable: "base" });
  });
});
