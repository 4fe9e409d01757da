// The repeated-measures checks of the normalized residuals (app/engine/repeated/repeated-checks.ts)
// against R on the same residuals: Shapiro–Wilk as stats::shapiro.test (Royston's AS R94) and
// Brown–Forsythe as car::leveneTest(center = median) across the visit-by-arm cells (and across
// visits alone, as for a model without a treatment). Values from
// tests/reference/repeated/generate-checks.R on the normalized residuals that generate.R computed
// for the invented three-arm trial; the engine's own residuals agree with those at 1e-5
// (repeated-reference.test.ts) and, here, to about 1e-12, so the statistics are held to 1e-8.
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { readCsvText } from "~/engine-io/read-csv";
import { evaluateRepeatedChecks } from "~/engine/repeated/repeated-checks";
import { fitRepeatedModel, type RepeatedResult } from "~/engine/repeated/repeated-model";
import type { CheckKey } from "~/engine/checks";
import { expectClose } from "./compare";

const ROOT = join(import.meta.dirname, "repeated");
const TOL = 1e-8;

interface RChecks {
  source: string;
  records: number;
  shapiroWilk: { statistic: number; p: number };
  brownForsythe: { cells: number; statistic: number; df1: number; df2: number; p: number };
  brownForsytheByVisit: { cells: number; statistic: number; df1: number; df2: number; p: number };
}

const R = JSON.parse(
  readFileSync(join(ROOT, "values-checks", "trial-unstructured-reml.json"), "utf8"),
) as RChecks;
const result = fitRepeatedModel(
  JSON.parse(readFileSync(join(ROOT, "models", "trial-unstructured-reml.json"), "utf8")),
  readCsvText(readFileSync(join(ROOT, "data", "trial.csv"), "utf8")),
);
const check = (key: CheckKey, r: RepeatedResult = result) => {
  const [c] = evaluateRepeatedChecks(r, [{ key, enabled: true, threshold: 0.05, remedy: "" }]);
  return c;
};

describe(`normalized residual checks against R (${R.source})`, () => {
  it("reads every record of the fit", () => {
    expect(result.n).toBe(R.records);
  });

  it("Shapiro–Wilk W and p (stats::shapiro.test)", () => {
    const c = check("repeated_normality");
    expect(c.outcome).toBe(R.shapiroWilk.p < 0.05 ? "finding" : "within");
    expectClose(c.numbers?.statistic, R.shapiroWilk.statistic, TOL, "W");
    expectClose(c.numbers?.p, R.shapiroWilk.p, TOL, "p");
  });

  it("Brown–Forsythe F, df and p across the visit-by-arm cells (car::leveneTest, center = median)", () => {
    const c = check("repeated_spread");
    expect(c.outcome).toBe(R.brownForsythe.p < 0.05 ? "finding" : "within");
    expect(c.numbers?.df).toEqual([R.brownForsythe.df1, R.brownForsythe.df2]);
    expect(c.numbers?.measure).toContain(`${R.brownForsythe.cells} visit-by-arm cells`);
    expectClose(c.numbers?.statistic, R.brownForsythe.statistic, TOL, "F");
    expectClose(c.numbers?.p, R.brownForsythe.p, TOL, "p");
  });

  it("Brown–Forsythe across visits alone when no record has an arm", () => {
    const noArm: RepeatedResult = {
      ...result,
      observations: { ...result.observations, level: result.observations.level.map(() => null) },
    };
    const c = check("repeated_spread", noArm);
    expect(c.numbers?.df).toEqual([R.brownForsytheByVisit.df1, R.brownForsytheByVisit.df2]);
    expect(c.numbers?.measure).toContain(`${R.brownForsytheByVisit.cells} visits`);
    expectClose(c.numbers?.statistic, R.brownForsytheByVisit.statistic, TOL, "F");
    expectClose(c.numbers?.p, R.brownForsytheByVisit.p, TOL, "p");
  });

  it("Shapiro–Wilk is not computed above 5000 records, as for a linear model", () => {
    const many = Array.from({ length: 5001 }, (_, i) => Math.sin(i));
    const big: RepeatedResult = {
      ...result,
      observations: { ...result.observations, normalizedResidual: many },
    };
    const c = check("repeated_normality", big);
    expect(c.outcome).toBe("not_computed");
    expect(c.summary).toMatch(/at most 5000 residuals \(there are 5001\)/);
  });
});
