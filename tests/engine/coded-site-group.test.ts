// A pooled site group coded 701, 703, … is a categorical covariate stored as numbers. Entered as a
// number it fits one slope through arbitrary codes and moves the treatment p-value; entered as
// categorical it matches R's lm with factor(). Reference values: R's stats::lm, produced by
// tests/engine/coded-site-group/generate.R (committed with its invented data).
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { fitLinear } from "~/engine";
import { readCsvText } from "~/engine-io/read-csv";
import { expectClose } from "../reference/compare";

const DIR = join(import.meta.dirname, "coded-site-group");
const table = readCsvText(readFileSync(join(DIR, "data.csv"), "utf8"));
interface RRow {
  estimate: number;
  se: number;
  statistic: number;
  p: number;
}
const r = JSON.parse(readFileSync(join(DIR, "values.json"), "utf8")) as {
  categorical: { treatment: RRow; dfResidual: number; rank: number };
  continuous: { treatment: RRow; site: RRow; dfResidual: number; rank: number };
};

const spec = (categorical: boolean) => ({
  response: "chg",
  family: "gaussian" as const,
  treatment: "arm",
  terms: [
    { variable: "arm", categorical: true, reference: "Placebo" },
    { variable: "base" },
    categorical ? { variable: "sitegr1", categorical: true } : { variable: "sitegr1" },
  ],
});

function treatmentRow(categorical: boolean) {
  const fit = fitLinear(spec(categorical), table);
  const row = fit.coefficients.find((c) => c.term === "arm");
  if (!row) throw new Error("no treatment coefficient");
  return { fit, row };
}

function expectRow(actual: RRow, expected: RRow, label: string) {
  expectClose(actual.estimate, expected.estimate, 1e-8, `${label} estimate`);
  expectClose(actual.se, expected.se, 1e-8, `${label} SE`);
  expectClose(actual.statistic, expected.statistic, 1e-8, `${label} t`);
  expectClose(actual.p, expected.p, 1e-6, `${label} p`);
}

describe("numeric-coded pooled site group (R stats::lm)", () => {
  it("as categorical matches lm(chg ~ arm + base + factor(sitegr1))", () => {
    const { fit, row } = treatmentRow(true);
    expect(fit.rank).toBe(r.categorical.rank);
    expect(fit.dfResidual).toBe(r.categorical.dfResidual);
    expectRow(row, r.categorical.treatment, "treatment (factor)");
  });

  it("as a number matches lm(chg ~ arm + base + sitegr1), and the treatment p-value moves", () => {
    const { fit, row } = treatmentRow(false);
    expect(fit.rank).toBe(r.continuous.rank);
    expectRow(row, r.continuous.treatment, "treatment (numeric codes)");
    const site = fit.coefficients.find((c) => c.term === "sitegr1");
    expectRow(site as RRow, r.continuous.site, "site slope");
    // The silent default would have changed the conclusion's strength: p 0.098 against 0.42 here.
    expect(Math.abs(row.p - treatmentRow(true).row.p)).toBeGreaterThan(0.2);
  });
});
