// Linear-model reruns compared with R (stats::lm and influence measures, car, lmtest, sandwich,
// nortest, emmeans) on R's shipped datasets and invented seeded data. The values were produced
// by tests/reference/generate.R and are committed, so these tests run without R.
// Agreement: relative 1e-8 for estimates, standard errors, statistics and observation-level
// values; relative 1e-6 for p-values.
import { readFileSync, readdirSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { fitLinear as fitModel, type LinearModelResult } from "~/engine";
import { defaultChecks, evaluateChecks } from "~/engine/checks";
import { readCsvText } from "~/engine-io/read-csv";
import { expectAllClose, expectClose } from "./compare";

const ROOT = join(import.meta.dirname, ".");
const EST = 1e-8;
const PVAL = 1e-6;

interface RTest {
  statistic: number;
  p: number;
  df?: number;
  df1?: number;
  df2?: number;
}
interface RCase {
  case: string;
  source: string;
  data: string;
  model: string;
  meansWeighting: "equal" | "proportional";
  n: number;
  rank: number;
  dfResidual: number;
  excluded: number;
  coefficients: {
    rName: string;
    estimate: number;
    se: number;
    statistic: number;
    p: number;
    lower: number;
    upper: number;
  }[];
  robustSE: Record<"HC0" | "HC1" | "HC2" | "HC3", number[]>;
  fit: {
    sigma: number;
    rSquared: number;
    adjRSquared: number;
    fStatistic: number;
    fP: number;
    logLik: number;
    aic: number;
  };
  observations: {
    row: number[];
    fitted: number[];
    residual: number[];
    leverage: number[];
    studentizedInternal: number[];
    studentizedExternal: number[];
    cooksDistance: number[];
    dffits: number[];
    dfbetas: number[][];
    partialResiduals: number[][];
  };
  tests: Record<string, RTest & { byCovariate?: (RTest & { covariate: string })[] }>;
  vif: { term: string; gvif: number; df: number; adjusted: number }[] | null;
  vifByPredictor: { predictor: string; gvif: number; df: number; adjusted: number }[] | null;
  /** stats::vcov, by rows. */
  vcov: number[][];
  adjustedMeans: {
    means: { level: string; estimate: number; se: number; lower: number; upper: number }[];
    contrasts: {
      label: string;
      estimate: number;
      se: number;
      statistic: number;
      p: number;
      lower: number;
      upper: number;
    }[];
    hc3Means: { level: string; estimate: number; se: number; lower: number; upper: number }[];
    hc3Contrasts: {
      label: string;
      estimate: number;
      se: number;
      statistic: number;
      p: number;
      lower: number;
      upper: number;
    }[];
    /** emmeans::ref_grid: covariate values and the weights of the other factors' cells. */
    grid: {
      covariates: { variable: string; value: number }[];
      factors: string[];
      cells: { levels: string[]; weight: number }[];
    };
  } | null;
}

const cases: RCase[] = readdirSync(join(ROOT, "values"))
  .filter((f) => f.endsWith(".json") && !f.startsWith("glm-"))
  .sort()
  .map((f) => JSON.parse(readFileSync(join(ROOT, "values", f), "utf8")) as RCase);

function rerun(c: RCase): LinearModelResult {
  const spec: unknown = JSON.parse(readFileSync(join(ROOT, c.model), "utf8"));
  const table = readCsvText(readFileSync(join(ROOT, c.data), "utf8"));
  return fitModel(spec, table, { meansWeighting: c.meansWeighting });
}

function expectTest(
  actual:
    | {
        statistic: number | null;
        p: number | null;
        df?: number | null;
        df1?: number | null;
        df2?: number | null;
      }
    | undefined,
  expected: RTest,
  label: string,
): void {
  expect(actual, label).toBeDefined();
  if (!actual) return;
  expectClose(actual.statistic, expected.statistic, EST, `${label} statistic`);
  expectClose(actual.p, expected.p, PVAL, `${label} p`);
  if (expected.df !== undefined) expect(actual.df, `${label} df`).toBe(expected.df);
  if (expected.df1 !== undefined) expect(actual.df1, `${label} df1`).toBe(expected.df1);
  if (expected.df2 !== undefined) expect(actual.df2, `${label} df2`).toBe(expected.df2);
}

describe.each(cases.map((c) => [c.case, c] as const))("reference case %s", (_name, c) => {
  const result = rerun(c);

  it(`sizes (${c.source})`, () => {
    expect(result.n).toBe(c.n);
    expect(result.rank).toBe(c.rank);
    expect(result.dfResidual).toBe(c.dfResidual);
    expect(result.excluded).toBe(c.excluded);
    expect(result.observations.row).toEqual(c.observations.row);
  });

  it("coefficients, standard errors, t, p and 95% intervals (stats::lm, confint)", () => {
    expect(result.coefficients.length).toBe(c.coefficients.length);
    c.coefficients.forEach((rc, j) => {
      const ours = result.coefficients[j];
      const label = `${ours.name} (R: ${rc.rName})`;
      expectClose(ours.estimate, rc.estimate, EST, `${label} estimate`);
      expectClose(ours.se, rc.se, EST, `${label} se`);
      expectClose(ours.statistic, rc.statistic, EST, `${label} t`);
      expectClose(ours.p, rc.p, PVAL, `${label} p`);
      expectClose(ours.lower, rc.lower, EST, `${label} lower`);
      expectClose(ours.upper, rc.upper, EST, `${label} upper`);
    });
  });

  it("HC0–HC3 standard errors (sandwich::vcovHC)", () => {
    for (const type of ["HC0", "HC1", "HC2", "HC3"] as const) {
      expectAllClose(result.robustSE[type], c.robustSE[type], EST, type);
    }
  });

  it("residual standard error, R², adjusted R², F (summary.lm), log-likelihood and AIC", () => {
    expectClose(result.fit.sigma, c.fit.sigma, EST, "sigma");
    expectClose(result.fit.rSquared, c.fit.rSquared, EST, "R²");
    expectClose(result.fit.adjRSquared, c.fit.adjRSquared, EST, "adjusted R²");
    expectClose(result.fit.fStatistic, c.fit.fStatistic, EST, "F");
    expectClose(result.fit.fP, c.fit.fP, PVAL, "F p");
    expectClose(result.fit.logLikelihood, c.fit.logLik, EST, "logLik");
    expectClose(result.fit.aic, c.fit.aic, EST, "AIC");
  });

  it("observation-level diagnostics (fitted, residuals, hat values, rstandard, rstudent, Cook's distance, dffits, dfbetas)", () => {
    const o = result.observations;
    const r = c.observations;
    expectAllClose(o.fitted, r.fitted, EST, "fitted");
    expectAllClose(o.residual, r.residual, EST, "residual");
    expectAllClose(o.leverage, r.leverage, EST, "leverage");
    expectAllClose(o.studentizedInternal, r.studentizedInternal, EST, "internally studentized");
    expectAllClose(o.studentizedExternal, r.studentizedExternal, EST, "externally studentized");
    expectAllClose(o.cooksDistance, r.cooksDistance, EST, "Cook's distance");
    expectAllClose(o.dffits, r.dffits, EST, "DFFITS");
    expect(o.dfbetas.length).toBe(r.dfbetas.length);
    r.dfbetas.forEach((col, j) =>
      expectAllClose(o.dfbetas[j], col, EST, `DFBETAS ${result.coefficients[j].name}`),
    );
  });

  it('partial residuals per term (residuals(type = "partial"))', () => {
    const o = result.observations;
    expect(o.partialResiduals.length).toBe(c.observations.partialResiduals.length);
    c.observations.partialResiduals.forEach((col, j) =>
      expectAllClose(o.partialResiduals[j].values, col, EST, `partial ${o.partialResiduals[j].term}`),
    );
  });

  it("tests of assumptions (shapiro.test, nortest, lmtest, car::leveneTest, nested F)", () => {
    const t = result.tests;
    expectTest(t.shapiroWilk, c.tests.shapiroWilk, "Shapiro–Wilk");
    expectTest(t.andersonDarling, c.tests.andersonDarling, "Anderson–Darling");
    expectTest(t.lilliefors, c.tests.lilliefors, "Lilliefors");
    expectTest(t.breuschPagan, c.tests.breuschPagan, "Breusch–Pagan");
    if (c.tests.reset) expectTest(t.reset, c.tests.reset, "RESET");
    if (c.tests.brownForsythe) expectTest(t.brownForsythe, c.tests.brownForsythe, "Brown–Forsythe");
    const hos = c.tests.homogeneityOfSlopes;
    if (hos) {
      expectTest(t.homogeneityOfSlopes, hos, "homogeneity of slopes (joint)");
      hos.byCovariate?.forEach((b, i) => {
        expect(t.homogeneityOfSlopes?.byCovariate[i].covariate).toBe(b.covariate);
        expectTest(t.homogeneityOfSlopes?.byCovariate[i], b, `homogeneity of slopes (${b.covariate})`);
      });
    }
  });

  it("generalized variance inflation factors (car::vif)", () => {
    if (!c.vif) return;
    expect(result.vif.length).toBe(c.vif.length);
    c.vif.forEach((v, i) => {
      expectClose(result.vif[i].gvif, v.gvif, EST, `GVIF ${result.vif[i].term} (R: ${v.term})`);
      expect(result.vif[i].df).toBe(v.df);
      expectClose(result.vif[i].adjusted, v.adjusted, EST, `GVIF^(1/2df) ${result.vif[i].term}`);
    });
  });

  it('predictor-wise GVIF (car::vif(type = "predictor")) and the collinearity check that reads it', () => {
    if (!c.vifByPredictor) return;
    expect(result.vifByPredictor.map((v) => v.predictor)).toEqual(c.vifByPredictor.map((v) => v.predictor));
    c.vifByPredictor.forEach((v, i) => {
      expectClose(result.vifByPredictor[i].gvif, v.gvif, EST, `predictor GVIF ${v.predictor}`);
      expect(result.vifByPredictor[i].df).toBe(v.df);
      expectClose(
        result.vifByPredictor[i].adjusted,
        v.adjusted,
        EST,
        `predictor GVIF^(1/2df) ${v.predictor}`,
      );
    });
    const gvif = evaluateChecks(result, defaultChecks(result.spec.treatment !== undefined)).find(
      (k) => k.key === "gvif",
    );
    const threshold = Math.sqrt(5);
    expect(gvif?.outcome).toBe(c.vifByPredictor.some((v) => v.adjusted > threshold) ? "finding" : "within");
  });

  it("coefficient covariance matrix (stats::vcov)", () => {
    expect(result.covariance.length).toBe(c.vcov.length);
    c.vcov.forEach((row, i) => expectAllClose(result.covariance[i], row, EST, `vcov row ${i}`));
  });

  it("adjusted-means grid: covariate values and cell weights (emmeans::ref_grid)", () => {
    const g = c.adjustedMeans?.grid;
    if (!g) return;
    const ours = result.adjustedMeansGrid;
    expect(ours).toBeTruthy();
    if (!ours) return;
    expect(ours.covariates.map((v) => v.variable)).toEqual(g.covariates.map((v) => v.variable));
    g.covariates.forEach((v, i) =>
      expectClose(ours.covariates[i].value, v.value, EST, `grid value of ${v.variable}`),
    );
    expect(ours.factors).toEqual(g.factors);
    const weightOf = new Map(ours.cells.map((cell) => [cell.levels.join("|"), cell.weight]));
    expect(ours.cells.filter((cell) => cell.weight > 0).length).toBe(
      g.cells.filter((cell) => cell.weight > 0).length,
    );
    g.cells.forEach((cell) =>
      expectClose(
        weightOf.get(cell.levels.join("|")),
        cell.weight,
        EST,
        `weight of cell ${cell.levels.join(", ")}`,
      ),
    );
  });

  it("adjusted means and contrasts against the reference arm, model-based and HC3 (emmeans)", () => {
    const am = c.adjustedMeans;
    if (!am) {
      expect(result.adjustedMeans).toBeNull();
      return;
    }
    const means = result.adjustedMeans ?? [];
    const contrasts = result.contrasts ?? [];
    expect(means.map((m) => m.level)).toEqual(am.means.map((m) => m.level));
    am.means.forEach((m, i) => {
      expectClose(means[i].estimate, m.estimate, EST, `mean ${m.level}`);
      expectClose(means[i].se, m.se, EST, `mean se ${m.level}`);
      expectClose(means[i].lower, m.lower, EST, `mean lower ${m.level}`);
      expectClose(means[i].upper, m.upper, EST, `mean upper ${m.level}`);
      expectClose(means[i].hc3.se, am.hc3Means[i].se, EST, `HC3 mean se ${m.level}`);
      expectClose(means[i].hc3.lower, am.hc3Means[i].lower, EST, `HC3 mean lower ${m.level}`);
    });
    expect(contrasts.length).toBe(am.contrasts.length);
    am.contrasts.forEach((k, i) => {
      const ours = contrasts[i];
      const arm = result.spec.treatment ?? "";
      expect([
        `${ours.level} - ${ours.reference}`,
        `${arm}${ours.level} - ${arm}${ours.reference}`,
      ]).toContain(k.label.replace(/[()]/g, ""));
      expectClose(ours.estimate, k.estimate, EST, `contrast ${k.label}`);
      expectClose(ours.se, k.se, EST, `contrast se ${k.label}`);
      expectClose(ours.statistic, k.statistic, EST, `contrast t ${k.label}`);
      expectClose(ours.p, k.p, PVAL, `contrast p ${k.label}`);
      expectClose(ours.lower, k.lower, EST, `contrast lower ${k.label}`);
      expectClose(ours.upper, k.upper, EST, `contrast upper ${k.label}`);
      const h = am.hc3Contrasts[i];
      expectClose(ours.hc3.se, h.se, EST, `HC3 contrast se ${k.label}`);
      expectClose(ours.hc3.p, h.p, PVAL, `HC3 contrast p ${k.label}`);
      expectClose(ours.hc3.upper, h.upper, EST, `HC3 contrast upper ${k.label}`);
    });
  });
});

describe("collinearity check on a treatment by uncentred baseline interaction (reference: car::vif, case trial-arm-by-baseline)", () => {
  const c = cases.find((k) => k.case === "trial-arm-by-baseline");
  it("the term-wise GVIF of the arm is severe in R, the predictor-wise one is not, and the check follows the latter", () => {
    expect(c).toBeDefined();
    if (!c?.vif || !c.vifByPredictor) throw new Error("reference case lacks GVIF values");
    const threshold = Math.sqrt(5);
    expect(c.vif.find((v) => v.term === "arm")?.adjusted).toBeGreaterThan(threshold);
    expect(c.vifByPredictor.every((v) => v.adjusted < threshold)).toBe(true);
    const result = rerun(c);
    expect(evaluateChecks(result, defaultChecks(true)).find((k) => k.key === "gvif")?.outcome).toBe("within");
  });
});
