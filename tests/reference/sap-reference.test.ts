// The analysis as a statistical analysis plan states it, on an invented long dataset (subject x
// parameter x visit): a population of several conditions, adjusted means with equal or
// proportional weighting, contrasts against the reference arm or between all pairs (model-based
// and HC3), the overall test of the treatment term, and multiplicity adjustment. Values were
// produced by tests/reference/sap/generate.R with R's lm, emmeans (weights, contrast with
// adjust = "none"), sandwich::vcovHC(type = "HC3"), car::Anova(type = 2), glm with
// anova(test = "LRT") and p.adjust; they are committed. Agreement: relative 1e-8 for estimates and
// standard errors, 1e-6 for p-values.
import { execFile } from "node:child_process";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { readCsvText } from "~/engine-io/read-csv";
import { fitModel, toDataTable, type ModelSpecInput } from "~/engine";
import { selectPopulation } from "~/engine/population";
import { adjustPValues } from "~/engine/multiplicity";
import { expectAllClose, expectClose } from "./compare";

const ROOT = join(import.meta.dirname, "sap");
const REPO = join(import.meta.dirname, "..", "..");

function runCli(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(
      join(REPO, "node_modules", ".bin", "tsx"),
      [join(REPO, "app", "cli.ts"), ...args],
      { cwd: REPO },
      (err, stdout, stderr) => {
        resolve({ code: err ? (typeof err.code === "number" ? err.code : 1) : 0, stdout, stderr });
      },
    );
  });
}

interface RContrasts {
  label: string[];
  level: string[];
  reference: string[];
  estimate: number[];
  se: number[];
  lower: number[];
  upper: number[];
  statistic: number[];
  p: number[];
  pAdjusted: Record<"bonferroni" | "holm" | "hochberg", number[]>;
}
interface RLinear {
  population: { inFile: number; excluded: number; removed: number[] };
  n: number;
  missing: number;
  treatment: { statistic: number; df1: number; df2: number; p: number };
  results: {
    means: "equal" | "proportional";
    contrasts: "reference" | "pairwise";
    adjustedMeans: { level: string[]; estimate: number[]; se: number[] };
    model: RContrasts;
    hc3: RContrasts;
  }[];
}

const table = toDataTable(readCsvText(readFileSync(join(ROOT, "data", "long-trial.csv"), "utf8")));
const linearSpec = JSON.parse(
  readFileSync(join(ROOT, "models", "long-ancova.json"), "utf8"),
) as ModelSpecInput & { population: never };
const linearRef = JSON.parse(readFileSync(join(ROOT, "values", "long-ancova.json"), "utf8")) as RLinear;
const glmSpec = JSON.parse(readFileSync(join(ROOT, "models", "long-responder.json"), "utf8"));
const glmRef = JSON.parse(readFileSync(join(ROOT, "values", "long-responder.json"), "utf8"));

describe("population of several conditions", () => {
  it("keeps the rows meeting every condition and counts the others by the first condition they fail (as R's subsetting)", () => {
    const sel = selectPopulation(table, linearSpec.population);
    expect(sel.excluded).toBe(linearRef.population.excluded);
    expect(sel.byCondition.map((s) => s.removed)).toEqual(linearRef.population.removed);
    expect(sel.byCondition.map((s) => s.condition)).toEqual([
      "EFFFL in Y",
      "PARAMCD in ACTOT",
      "AVISITN in 24",
      "AGE from 18 to 75",
      "SITEID not in 999",
    ]);
  });

  it("refuses a single-record model on rows with a subject more than once, naming the subject and the columns that separate its records", () => {
    const spec = {
      ...linearSpec,
      population: [
        { column: "EFFFL", in: ["Y"] },
        { column: "PARAMCD", in: ["ACTOT"] },
      ],
    };
    const sel = selectPopulation(table, spec.population);
    expect(() => fitModel(spec, sel.table)).toThrow(
      /subject "LNG-\d{3}" \(USUBJID\) appears in 3 analysed rows.*AVISITN \(0, 12, 24\)/,
    );
  });
});

describe("adjusted means, contrasts, treatment test and multiplicity against R", () => {
  const sel = selectPopulation(table, linearSpec.population);
  for (const r of linearRef.results) {
    for (const multiplicity of ["none", "bonferroni", "holm", "hochberg"] as const) {
      it(`${r.means} weighting, ${r.contrasts} contrasts, ${multiplicity} (emmeans, sandwich HC3, p.adjust)`, () => {
        const result = fitModel(
          { ...linearSpec, means: r.means, contrasts: r.contrasts, multiplicity },
          sel.table,
        );
        if (result.kind !== "linear") throw new Error("expected a linear result");
        expect(result.n).toBe(linearRef.n);
        expect(result.excluded).toBe(linearRef.missing);
        expect(result.adjustedMeansWeighting).toBe(r.means);
        const means = result.adjustedMeans ?? [];
        expect(means.map((m) => m.level)).toEqual(r.adjustedMeans.level);
        expectAllClose(
          means.map((m) => m.estimate),
          r.adjustedMeans.estimate,
          1e-8,
          "adjusted means",
        );
        expectAllClose(
          means.map((m) => m.se),
          r.adjustedMeans.se,
          1e-8,
          "adjusted mean SE",
        );
        const c = result.contrasts ?? [];
        expect(c.map((x) => x.label)).toEqual(r.model.label);
        expect(c.map((x) => x.reference)).toEqual(r.model.reference);
        for (const [mine, ref] of [
          [c, r.model],
          [c.map((x) => ({ ...x.hc3, estimate: x.estimate })), r.hc3],
        ] as const) {
          expectAllClose(
            mine.map((x) => x.estimate),
            ref.estimate,
            1e-8,
            "contrast estimate",
          );
          expectAllClose(
            mine.map((x) => x.se),
            ref.se,
            1e-8,
            "contrast SE",
          );
          expectAllClose(
            mine.map((x) => x.lower),
            ref.lower,
            1e-8,
            "contrast lower",
          );
          expectAllClose(
            mine.map((x) => x.upper),
            ref.upper,
            1e-8,
            "contrast upper",
          );
          expectAllClose(
            mine.map((x) => x.statistic),
            ref.statistic,
            1e-8,
            "contrast t",
          );
          mine.forEach((x, k) => expectClose(x.p, ref.p[k], 1e-6, `contrast p ${k}`));
          if (multiplicity === "none") expect(mine.every((x) => x.pAdjusted === undefined)).toBe(true);
          else
            mine.forEach((x, k) =>
              expectClose(x.pAdjusted, ref.pAdjusted[multiplicity][k], 1e-6, `${multiplicity} p ${k}`),
            );
        }
        const t = result.tests.treatment;
        expect(t?.df1).toBe(linearRef.treatment.df1);
        expect(t?.df2).toBe(linearRef.treatment.df2);
        expectClose(t?.statistic, linearRef.treatment.statistic, 1e-8, "treatment F (car::Anova type II)");
        expectClose(t?.p, linearRef.treatment.p, 1e-6, "treatment F p");
      });
    }
  }

  it("adjusts p-values as R's p.adjust does, with ties and a value of one (p.adjust on c(0.01, 0.04, 0.03, 0.04, 0.5, 1), values from R 4 run here)", () => {
    const p = [0.01, 0.04, 0.03, 0.04, 0.5, 1];
    expectAllClose(adjustPValues(p, "bonferroni"), [0.06, 0.24, 0.18, 0.24, 1, 1], 1e-12, "bonferroni");
    expectAllClose(adjustPValues(p, "holm"), [0.06, 0.16, 0.15, 0.16, 1, 1], 1e-12, "holm");
    expectAllClose(adjustPValues(p, "hochberg"), [0.06, 0.12, 0.12, 0.12, 1, 1], 1e-12, "hochberg");
  });

  it('gives the likelihood-ratio χ² of the treatment term of a binomial model (glm, anova(test = "LRT"))', () => {
    const sel = selectPopulation(table, glmSpec.population);
    const result = fitModel(glmSpec, sel.table);
    if (result.kind !== "glm") throw new Error("expected a GLM result");
    expect(result.n).toBe(glmRef.n);
    expect(sel.excluded).toBe(glmRef.excluded);
    const t = result.checks.treatment;
    expect(t?.df).toBe(glmRef.treatment.df);
    expectClose(t?.statistic, glmRef.treatment.statistic, 1e-8, "treatment χ²");
    expectClose(t?.p, glmRef.treatment.p, 1e-6, "treatment χ² p");
    // pairwise marginal contrasts with Hochberg's adjustment within each measure
    expect(
      result.marginalEffects?.contrasts
        .filter((c) => c.measure === "risk difference")
        .map((c) => `${c.level} vs ${c.reference}`),
    ).toEqual(["HIGH vs PBO", "LOW vs PBO", "LOW vs HIGH"]);
    expect(
      result.marginalEffects?.contrasts.every((c) => c.pAdjusted !== undefined && c.pAdjusted >= c.p),
    ).toBe(true);
  });
});

describe("headless command reads the same model object", () => {
  it("applies the population, weighting, pairwise contrasts and Holm's adjustment (R values)", async () => {
    const run = await runCli([
      "fit",
      "--data",
      join(ROOT, "data", "long-trial.csv"),
      "--model",
      join(ROOT, "models", "long-ancova.json"),
    ]);
    expect(run.code, run.stderr).toBe(0);
    const out = JSON.parse(run.stdout);
    const r = linearRef.results.find((x) => x.means === "proportional" && x.contrasts === "pairwise");
    if (!r) throw new Error("reference case missing");
    expect(out.n).toBe(linearRef.n);
    expect(out.excludedByPopulation).toBe(linearRef.population.excluded);
    expect(out.multiplicity).toBe("holm");
    expect(out.contrasts.map((c: { label: string }) => c.label)).toEqual(r.model.label);
    for (const key of [
      "label",
      "level",
      "reference",
      "estimate",
      "se",
      "lower",
      "upper",
      "statistic",
      "p",
      "pAdjusted",
    ])
      expect(out.contrasts[0]).toHaveProperty(key);
    expectAllClose(
      out.contrasts.map((c: { estimate: number }) => c.estimate),
      r.model.estimate,
      1e-8,
      "CLI contrast estimate",
    );
    out.contrasts.forEach((c: { pAdjusted: number }, k: number) =>
      expectClose(c.pAdjusted, r.model.pAdjusted.holm[k], 1e-6, `CLI Holm p ${k}`),
    );
    expect(Object.keys(out.tests.treatment)).toEqual(
      expect.arrayContaining(["statistic", "df1", "df2", "p"]),
    );
    expectClose(out.tests.treatment.statistic, linearRef.treatment.statistic, 1e-8, "CLI treatment F");
    const glm = await runCli([
      "fit",
      "--data",
      join(ROOT, "data", "long-trial.csv"),
      "--model",
      join(ROOT, "models", "long-responder.json"),
    ]);
    expect(glm.code, glm.stderr).toBe(0);
    const g = JSON.parse(glm.stdout);
    expect(Object.keys(g.tests.treatment)).toEqual(expect.arrayContaining(["statistic", "df", "p"]));
    expectClose(g.tests.treatment.statistic, glmRef.treatment.statistic, 1e-8, "CLI treatment χ²");
    expect(g.excludedByPopulation).toBe(glmRef.excluded);
  }, 60_000);
});

describe("a time-to-event model takes the population array too", () => {
  it("fits the Cox model to the rows the condition keeps (survival::coxph on survival::colon deaths)", async () => {
    const ref = JSON.parse(readFileSync(join(ROOT, "values", "colon-deaths.json"), "utf8"));
    const run = await runCli([
      "fit",
      "--data",
      join(import.meta.dirname, "survival", "data", "colon-cluster-log.csv"),
      "--model",
      join(ROOT, "models", "colon-deaths.json"),
    ]);
    expect(run.code, run.stderr).toBe(0);
    const out = JSON.parse(run.stdout);
    expect(out.excludedByPopulation).toBe(ref.excluded);
    expect(out.n).toBe(ref.n);
    expectAllClose(
      out.coefficients.map((c: { estimate: number }) => c.estimate),
      ref.coefficients.estimate,
      1e-6,
      "Cox estimates",
    );
    expectAllClose(
      out.coefficients.map((c: { se: number }) => c.se),
      ref.coefficients.se,
      1e-6,
      "Cox SE",
    );
  }, 60_000);
});
