/**
 * The reproduction check on a published analysis: an invented three-arm ANCOVA trial fitted by R
 * (stats::lm, emmeans; tests/reference/reproduction/generate.R), its results printed as a
 * clinical study report prints them (models/printed.json) and once with a mistyped value
 * (models/mistyped.json). The rerun reproduces every correctly printed value and names the
 * mistyped one, in the engine and in the headless command's answer.
 */
import { execFile } from "node:child_process";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { fitLinear, parseModelSpec } from "~/engine";
import { checkReproduction, reproductionAsCheck, type ReproductionResult } from "~/engine/reproduction";
import type { PublishedValue } from "~/engine/published-values";
import { readCsvText } from "~/engine-io/read-csv";
import { expectClose } from "./compare";

const ROOT = join(import.meta.dirname, "..", "..");
const DIR = join(ROOT, "tests", "reference", "reproduction");
const DATA = join(DIR, "data", "trial.csv");
const model = (name: string) =>
  parseModelSpec(JSON.parse(readFileSync(join(DIR, "models", `${name}.json`), "utf8")));
const R = JSON.parse(readFileSync(join(DIR, "values", "r-values.json"), "utf8")) as {
  n: number;
  values: { published: PublishedValue; r: number }[];
  mistyped: { index: number; printed: string };
};

function rerun(name: string): ReproductionResult {
  const spec = model(name);
  const result = fitLinear(spec, readCsvText(readFileSync(DATA, "utf8")));
  expect(result.n).toBe(R.n);
  return checkReproduction(result, spec.published ?? []);
}

describe("reproduction check against R's fit of an invented trial", () => {
  it("the engine's unrounded values equal R's (relative 1e-8; p 1e-6)", () => {
    const rep = rerun("printed");
    rep.values.forEach((v, k) =>
      expectClose(v.rerunValue, R.values[k].r, v.published.statistic === "p" ? 1e-6 : 1e-8, v.quantity),
    );
  });

  it("reproduces every correctly printed value", () => {
    const rep = rerun("printed");
    expect(rep.values).toHaveLength(13);
    for (const v of rep.values)
      expect(v, `${v.quantity}: ${v.reason}`).toMatchObject({ outcome: "reproduced" });
    expect(rep.outcome).toBe("reproduced");
    expect(reproductionAsCheck(rep)).toMatchObject({
      outcome: "within",
      statistic: "13 of 13 published values reproduced",
    });
    // the p below 0.001 was printed as a bound, and read as one
    expect(rep.values[4]).toMatchObject({ printed: "<0.001", outcome: "reproduced" });
    expect(rep.values[4].reason).toMatch(/is below 0\.001/);
  });

  it("fails on the mistyped value, and only on it", () => {
    const rep = rerun("mistyped");
    expect(rep.outcome).toBe("not_reproduced");
    const failed = rep.values.filter((v) => v.outcome === "not_reproduced");
    expect(failed).toHaveLength(1);
    expect(failed[0].printed).toBe(R.mistyped.printed);
    expect(failed[0].reason).toBe(`rounds to ${rep.values[0].rerunRounded}, printed ${R.mistyped.printed}`);
    const check = reproductionAsCheck(rep);
    expect(check).toMatchObject({ outcome: "finding", statistic: "12 of 13 published values reproduced" });
    expect(check.summary).toContain(`printed ${R.mistyped.printed}`);
  });

  it("names what it cannot find instead of passing it", () => {
    const spec = model("printed");
    const result = fitLinear(spec, readCsvText(readFileSync(DATA, "utf8")));
    const rep = checkReproduction(result, [
      { quantity: "contrast", level: "Medium", statistic: "estimate", value: "-1.00" },
      { quantity: "coefficient", term: [{ variable: "REGION" }], statistic: "estimate", value: "0.50" },
      {
        quantity: "coefficient",
        term: [{ variable: "REGION", level: "North" }],
        statistic: "estimate",
        value: "0.50",
      },
      { quantity: "coefficient", term: [{ variable: "AGE" }], statistic: "estimate", value: "0.50" },
    ]);
    expect(rep.outcome).toBe("not_reproduced");
    expect(rep.values.map((v) => v.reason)).toEqual([
      "the rerun reports no contrast Medium vs Placebo",
      "coefficient REGION: REGION is categorical, name its level (South)",
      'coefficient REGION: North: REGION has no coefficient for "North" (it is the reference level)',
      "the model has no term AGE",
    ]);
  });

  it("the headless command answers the same check under the model's published values", async () => {
    const run = (name: string) =>
      new Promise<{ code: number; stdout: string; stderr: string }>((resolve) => {
        execFile(
          join(ROOT, "node_modules", ".bin", "tsx"),
          [
            join(ROOT, "app", "cli.ts"),
            "fit",
            "--data",
            DATA,
            "--model",
            join(DIR, "models", `${name}.json`),
          ],
          { cwd: ROOT },
          (err, stdout, stderr) =>
            resolve({ code: err ? (typeof err.code === "number" ? err.code : 1) : 0, stdout, stderr }),
        );
      });
    const [good, bad] = await Promise.all([run("printed"), run("mistyped")]);
    expect(good.code, good.stderr).toBe(0);
    expect(bad.code, bad.stderr).toBe(0);
    const a = JSON.parse(good.stdout) as { reproduction: ReproductionResult };
    const b = JSON.parse(bad.stdout) as { reproduction: ReproductionResult };
    expect(a.reproduction.outcome).toBe("reproduced");
    expect(a.reproduction.rule).toMatch(/half away from zero/);
    expect(b.reproduction.outcome).toBe("not_reproduced");
    expect(b.reproduction.values.filter((v) => v.outcome === "not_reproduced").map((v) => v.printed)).toEqual(
      [R.mistyped.printed],
    );
  }, 60_000);
});

describe("values found by structure on other committed reference cases (R values written by tests/reference/generate.R)", () => {
  const REF = join(ROOT, "tests", "reference");
  const refCase = (name: string) => ({
    spec: parseModelSpec(JSON.parse(readFileSync(join(REF, "models", `${name}.json`), "utf8"))),
    table: readCsvText(readFileSync(join(REF, "data", `${name}.csv`), "utf8")),
    r: JSON.parse(readFileSync(join(REF, "values", `${name}.json`), "utf8")),
  });
  const printed = (x: number, d: number) =>
    (Math.sign(x) * Math.floor(Math.abs(x) * 10 ** d + 0.5 + 1e-9)) / 10 ** d;

  it("an interaction coefficient by its parts, in either order (warpbreaks: R's woolB:tensionM)", () => {
    const { spec, table, r } = refCase("warpbreaks-interaction");
    const rCoef = (r.coefficients as { rName: string; estimate: number; p: number }[]).find(
      (c) => c.rName === "woolB:tensionM",
    )!;
    const result = fitLinear(spec, table);
    const term = [
      { variable: "tension", level: "M" },
      { variable: "wool", level: "B" },
    ];
    const rep = checkReproduction(result, [
      { quantity: "coefficient", term, statistic: "estimate", value: printed(rCoef.estimate, 3).toFixed(3) },
      { quantity: "coefficient", term, statistic: "p", value: printed(rCoef.p, 4).toFixed(4) },
      {
        quantity: "coefficient",
        term: [
          { variable: "wool", level: "B" },
          { variable: "tension", level: "H" },
        ],
        statistic: "estimate",
        value: printed(rCoef.estimate, 3).toFixed(3),
      }, // another cell's value
    ]);
    expect(rep.values.map((v) => v.outcome)).toEqual(["reproduced", "reproduced", "not_reproduced"]);
  });

  it("a binomial model's marginal risk difference names its measure (R: glm with emmeans counterfactual means)", async () => {
    const { spec, table, r } = refCase("glm-trial-responder");
    const { fitModel } = await import("~/engine");
    const result = fitModel(spec, table);
    const diff = r.marginal.differences[0] as { estimate: number; se: number };
    const rep = checkReproduction(result, [
      {
        quantity: "contrast",
        level: "Active",
        measure: "risk difference",
        statistic: "estimate",
        value: printed(diff.estimate, 3).toFixed(3),
      },
      {
        quantity: "contrast",
        level: "Active",
        measure: "risk difference",
        statistic: "se",
        value: printed(diff.se, 4).toFixed(4),
      },
      {
        quantity: "mean",
        level: "Placebo",
        statistic: "estimate",
        value: printed(r.marginal.means[1].estimate, 3).toFixed(3),
      },
      { quantity: "contrast", level: "Active", statistic: "estimate", value: "0.276" },
    ]);
    expect(rep.values.map((v) => v.outcome)).toEqual([
      "reproduced",
      "reproduced",
      "reproduced",
      "not_reproduced",
    ]);
    expect(rep.values[3].reason).toMatch(
      /name the measure printed \(risk difference, risk ratio, odds ratio\)/,
    );
  });
});
