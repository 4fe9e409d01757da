// The headless rerun command as a subprocess: one JSON object on stdout and exit 0, or exit 2
// with one "error:" line on stderr. Values are checked against R (committed reference values).
import { execFile } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { expectAllClose, expectClose, ourCoefficientName } from "./compare";

const ROOT = join(import.meta.dirname, "..", "..");
const REF = join(ROOT, "tests", "reference");
const TSX = join(ROOT, "node_modules", ".bin", "tsx");

function runCli(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(TSX, [join(ROOT, "app", "cli.ts"), ...args], { cwd: ROOT }, (err, stdout, stderr) => {
      const code = err ? (typeof err.code === "number" ? err.code : 1) : 0;
      resolve({ code, stdout, stderr });
    });
  });
}

const scratch = mkdtempSync(join(tmpdir(), "plumbline-cli-"));
function file(name: string, text: string): string {
  const path = join(scratch, name);
  writeFileSync(path, text);
  return path;
}

const KEYS = [
  "n",
  "excluded",
  "rank",
  "dfResidual",
  "coefficients",
  "covariance",
  "robustSE",
  "fit",
  "observations",
  "tests",
  "vif",
];

describe("headless rerun command", () => {
  it("answers the contract on reference cases (R values, relative 1e-8 / p 1e-6)", async () => {
    // strong-effect: p-values near 1e-28 must reach the JSON as R computes them, not as 0
    const cases = ["trial-ancova", "warpbreaks-interaction", "mtcars-missing", "strong-effect"];
    const runs = await Promise.all(
      cases.map((c) =>
        runCli(["fit", "--data", join(REF, "data", `${c}.csv`), "--model", join(REF, "models", `${c}.json`)]),
      ),
    );
    const interaction = JSON.parse(runs[cases.indexOf("warpbreaks-interaction")].stdout) as {
      coefficients: { name: string }[];
    };
    expect(interaction.coefficients.map((c) => c.name)).toEqual([
      "Intercept",
      "wool: B",
      "tension: H",
      "tension: M",
      "wool: B × tension: H",
      "wool: B × tension: M",
    ]);
    runs.forEach((run, k) => {
      expect(run.code, run.stderr).toBe(0);
      expect(run.stdout.trim().split("\n").length).toBe(1);
      const out = JSON.parse(run.stdout);
      const ref = JSON.parse(readFileSync(join(REF, "values", `${cases[k]}.json`), "utf8"));
      for (const key of KEYS) expect(out, key).toHaveProperty(key);
      for (const key of ["adjustedMeans", "adjustedMeansGrid", "contrasts"])
        expect(out, key).toHaveProperty(key);
      expect(out.tests).toHaveProperty("brownForsythe");
      expect(Object.keys(out.coefficients[0])).toEqual([
        "name",
        "estimate",
        "se",
        "statistic",
        "p",
        "lower",
        "upper",
        "seScale",
      ]);
      expect(out.coefficients.every((c: { seScale: string }) => c.seScale === "response")).toBe(true);
      expect(out.contrasts.every((c: { seScale: string }) => c.seScale === "response")).toBe(true);
      // log-likelihood and AIC (stats::logLik, AIC), the covariance matrix (stats::vcov) and the
      // grid the adjusted means average over (emmeans::ref_grid)
      expectClose(out.fit.logLik, ref.fit.logLik, 1e-8, `${cases[k]} logLik`);
      expectClose(out.fit.aic, ref.fit.aic, 1e-8, `${cases[k]} AIC`);
      expect(out.covariance.names).toEqual(out.coefficients.map((c: { name: string }) => c.name));
      // coefficient names: "VAR: LEVEL", interaction parts joined by " × " (R's names mapped, not copied)
      const model = JSON.parse(readFileSync(join(REF, "models", `${cases[k]}.json`), "utf8")) as {
        terms: { variable?: string }[];
      };
      const variables = model.terms.flatMap((t) => (t.variable ? [t.variable] : []));
      expect(out.coefficients.map((c: { name: string }) => c.name)).toEqual(
        ref.coefficients.map((c: { rName: string }) => ourCoefficientName(c.rName, variables)),
      );
      ref.vcov.forEach((row: number[], i: number) =>
        expectAllClose(out.covariance.matrix[i], row, 1e-8, `${cases[k]} vcov row ${i}`),
      );
      expect(out.adjustedMeansGrid.weighting).toBe(ref.adjustedMeans.weighting);
      ref.adjustedMeans.grid.covariates.forEach((v: { variable: string; value: number }, i: number) =>
        expectClose(
          out.adjustedMeansGrid.covariates[i].value,
          v.value,
          1e-8,
          `${cases[k]} grid ${v.variable}`,
        ),
      );
      expectAllClose(
        out.adjustedMeansGrid.cells.map((cell: { weight: number }) => cell.weight).sort(),
        ref.adjustedMeans.grid.cells.map((cell: { weight: number }) => cell.weight).sort(),
        1e-8,
        `${cases[k]} grid weights`,
      );
      expect(Object.keys(out.observations[0])).toEqual([
        "row",
        "id",
        "fitted",
        "residual",
        "leverage",
        "studentizedInternal",
        "studentizedExternal",
        "cooksDistance",
        "dffits",
        "dfbetas",
      ]);
      expect(out.n).toBe(ref.n);
      expect(out.excluded).toBe(ref.excluded);
      expect(out.observations.map((o: { row: number }) => o.row)).toEqual(ref.observations.row);
      ref.coefficients.forEach((c: { estimate: number; p: number }, j: number) => {
        expectClose(out.coefficients[j].estimate, c.estimate, 1e-8, `${cases[k]} estimate ${j}`);
        expectClose(out.coefficients[j].p, c.p, 1e-6, `${cases[k]} p ${j}`);
      });
      expectAllClose(
        out.observations.map((o: { cooksDistance: number }) => o.cooksDistance),
        ref.observations.cooksDistance,
        1e-8,
        "Cook's distance",
      );
      expectAllClose(out.robustSE.HC3, ref.robustSE.HC3, 1e-8, "HC3");
      expectClose(out.tests.shapiroWilk.p, ref.tests.shapiroWilk.p, 1e-6, "Shapiro–Wilk p");
    });
  });

  it("exits 2 with one error line on bad input", async () => {
    const goodModel = file(
      "model.json",
      JSON.stringify({ response: "y", terms: [{ variable: "x" }, { variable: "arm", reference: "A" }] }),
    );
    const goodData = "y,x,arm\n1.2,1,A\n2.3,2,B\n2.9,3,A\n4.4,4,B\n5.1,5,A\n";
    const cases: { data: string; model?: string; expect: RegExp }[] = [
      { data: "", expect: /^error: The file d0\.csv is empty\.$/ },
      {
        data: "y,x,arm\n1,2,A\n3,4\n",
        expect: /^error: d1\.csv: row 2 has 2 fields where the header has 3 columns/,
      },
      { data: "y,z,arm\n1,2,A\n3,4,B\n", expect: /^error: column "x" is missing from the data$/ },
      {
        data: goodData.replace("2.9", "n/a"),
        expect: /^error: response column "y" is not numeric: data row 3 has "n\/a"$/,
      },
      {
        data: goodData,
        model: JSON.stringify({ response: "y", terms: [{ variable: "arm", reference: "Placebo" }] }),
        expect: /levels: A, B$/,
      },
      { data: goodData, model: "{ not json", expect: /^error: the model file is not valid JSON/ },
    ];
    const runs = await Promise.all(
      cases.map((c, i) =>
        runCli([
          "fit",
          "--data",
          file(`d${i}.csv`, c.data),
          "--model",
          c.model ? file(`m${i}.json`, c.model) : goodModel,
        ]),
      ),
    );
    runs.forEach((run, i) => {
      expect(run.code, run.stderr).toBe(2);
      expect(run.stdout).toBe("");
      const lines = run.stderr.trim().split("\n");
      expect(lines.length).toBe(1);
      expect(lines[0]).toMatch(cases[i].expect);
    });
  });

  it("answers generalized linear models with their keys, and reports separation with exit 2", async () => {
    const c = "glm-trial-responder";
    const sepData = file(
      "sep.csv",
      "y,x\n" + Array.from({ length: 16 }, (_, i) => `${i >= 8 ? 1 : 0},${i}`).join("\n") + "\n",
    );
    const sepModel = file(
      "sep.json",
      JSON.stringify({ response: "y", family: "binomial", terms: [{ variable: "x" }] }),
    );
    const [run, sep] = await Promise.all([
      runCli(["fit", "--data", join(REF, "data", `${c}.csv`), "--model", join(REF, "models", `${c}.json`)]),
      runCli(["fit", "--data", sepData, "--model", sepModel]),
    ]);
    expect(run.code, run.stderr).toBe(0);
    const out = JSON.parse(run.stdout);
    const ref = JSON.parse(readFileSync(join(REF, "values", `${c}.json`), "utf8"));
    for (const key of ["deviance", "nullDeviance", "logLik", "aic", "dispersion", "iterations"])
      expect(out.fit).toHaveProperty(key);
    expect(Object.keys(out.observations[0])).toEqual([
      "row",
      "id",
      "fitted",
      "residual",
      "pearson",
      "devianceResidual",
      "leverage",
      "studentizedInternal",
      "studentizedExternal",
      "cooksDistance",
      "dfbetas",
      "quantileResidual",
    ]);
    expectClose(out.fit.deviance, ref.fit.deviance, 1e-6, "deviance");
    expectAllClose(
      out.observations.map((o: { pearson: number }) => o.pearson),
      ref.observations.pearson,
      1e-6,
      "Pearson",
      1e-2,
    );
    expect(out.marginalEffects.contrasts.map((k: { measure: string }) => k.measure)).toEqual([
      "risk difference",
      "risk ratio",
      "odds ratio",
    ]);
    // the scale of each SE: coefficients on the link scale, ratios on the log scale
    expect(out.coefficients.every((k: { seScale: string }) => k.seScale === "link (logit)")).toBe(true);
    expect(out.marginalEffects.contrasts.map((k: { seScale: string }) => k.seScale)).toEqual([
      "response",
      "log",
      "log",
    ]);
    expect(out.marginalEffects.grid).toMatchObject({ kind: "rows", n: ref.n });
    expect(out.marginalEffects.robustVariance).toEqual({ applies: true });
    ref.vcov.forEach((row: number[], i: number) =>
      expectAllClose(out.covariance.matrix[i], row, 1e-6, `vcov row ${i}`),
    );
    expect(sep.code).toBe(2);
    expect(sep.stderr.trim().split("\n")).toHaveLength(1);
    expect(sep.stderr).toMatch(/^error: complete separation: the estimates for "x" diverge/);
  });

  it("inspect describes a CSV file: decimal commas read as numbers, a warning naming text cells among numbers, the detected key", async () => {
    const lines = ["usubjid;visit;aval;crp"];
    for (let i = 1; i <= 30; i++) lines.push(`S-${i};W1;${i},5;${i === 7 ? "<5" : i * 2}`);
    const run = await runCli(["inspect", "--data", file("semi.csv", lines.join("\n") + "\n")]);
    expect(run.code, run.stderr).toBe(0);
    expect(JSON.parse(run.stdout)).toEqual({
      format: "csv",
      rows: 30,
      columns: [
        { name: "usubjid", label: null, type: "text" },
        { name: "visit", label: null, type: "text" },
        { name: "aval", label: null, type: "number" },
        { name: "crp", label: null, type: "text" },
      ],
      key: ["usubjid"],
      problems: [
        {
          severity: "warning",
          message:
            'semi.csv: column "crp" is mostly numbers, but 1 cell holds text, so it was read as text: row 7 "<5". Correct it (or leave missing values empty) and upload again to read the column as numbers.',
        },
      ],
    });
    const bad = await runCli(["inspect", "--data", file("ragged.csv", "a,b\n1,2\n3\n4,5,6\n")]);
    expect(bad.code).toBe(2);
    expect(bad.stdout).toBe("");
    expect(bad.stderr.trim().split("\n")).toHaveLength(1);
    expect(bad.stderr).toMatch(/^error: ragged\.csv: row 2 has 1 field where the header has 2 columns\./);
  });
});
