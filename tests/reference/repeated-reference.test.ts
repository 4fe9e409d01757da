// Repeated-measures (MMRM) fits compared with R's nlme::gls (Debian r-cran-nlme; corSymm +
// varIdent for unstructured, corCompSymm, corAR1 and corARMA(p = visits − 1) on the visit
// position for Toeplitz, with varIdent for the heterogeneous forms) and emmeans on the gls fit
// (mode = "satterthwaite"). Values from tests/reference/repeated/generate.R on nlme's open
// Orthodont data and an invented three-arm trial with dropout; they are committed. gls stops
// short of the maximum by up to 1e-7 in log-likelihood (enough to move estimates by 1e-5), so the
// generator settles the values by direct computation from nlme's estimate (see generate.R): the
// log-likelihood (equal to nlme's at nlme's estimate), β̂ and (X'V⁻¹X)⁻¹ (for ML fits nlme's SEs
// carry a further factor √(N/(N − p)); these are the plain ones), normalized residuals by the
// inverse lower Cholesky factor (nlme's own agree except for compound symmetry, whose corStruct
// uses another square root), and exact Satterthwaite df of emmeans' linear functions.
// Agreement: 1e-5 relative for estimates, SEs, log-likelihood, AIC, the visits' covariance,
// fitted values and residuals (values below 1e-4 of a column's largest magnitude held to 1e-5 of
// that); Satterthwaite df 1e-4 relative against the direct computation (both use numerical
// Hessians). emmeans' own df (from nlme's apVar, a coarser finite-difference Hessian, up to 3%
// off here) are checked at 5e-2 only, as a check that the grid is emmeans'.
import { execFile } from "node:child_process";
import { readFileSync, readdirSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { readCsvText } from "~/engine-io/read-csv";
import { fitRepeatedModel } from "~/engine/repeated/repeated-model";
import { expectAllClose, expectClose } from "./compare";

const ROOT = join(import.meta.dirname, "repeated");
const TOL = 1e-5;
const DF_TOL = 1e-4;
const EMMEANS_DF_TOL = 5e-2;

interface RCase {
  source: string;
  coefficients: { name: string; estimate: number; se: number }[];
  logLik: number;
  aic: number;
  parameterCount: number;
  covariance: number[][];
  fitted: number[];
  residual: number[];
  normalizedResidual: number[];
  means?: { level: string; visit: string; estimate: number; se: number; df: number; emmeansDf: number }[];
  contrasts?: { label: string; visit: string; estimate: number; se: number; df: number; emmeansDf: number }[];
  pairwise?: { label: string; visit: string; estimate: number; se: number; df: number; emmeansDf: number }[];
}

const names = readdirSync(join(ROOT, "values"))
  .filter((f) => f.endsWith(".json"))
  .map((f) => f.replace(/\.json$/, ""))
  .sort();

function load(name: string) {
  const values = JSON.parse(readFileSync(join(ROOT, "values", `${name}.json`), "utf8")) as RCase;
  const spec = JSON.parse(readFileSync(join(ROOT, "models", `${name}.json`), "utf8")) as unknown;
  const file = name.startsWith("orthodont") ? "orthodont.csv" : "trial.csv";
  const table = readCsvText(readFileSync(join(ROOT, "data", file), "utf8"));
  return { values, spec, table };
}

describe.each(names)("nlme::gls reference %s", (name) => {
  const { values, spec, table } = load(name);
  const result = fitRepeatedModel(spec, table);

  it("converges with the planned structure", () => {
    expect(result.covariance.converged).toBe(true);
    expect(result.covariance.structure).toBe(result.covariance.planned);
  });

  it("log-likelihood, AIC and parameter count as nlme reports them", () => {
    expectClose(result.covariance.logLik, values.logLik, TOL, "logLik");
    expectClose(result.covariance.aic, values.aic, TOL, "AIC");
    expect(result.covariance.parameterCount).toBe(values.parameterCount);
  });

  it("coefficients and standard errors", () => {
    expect(result.coefficients.length).toBe(values.coefficients.length);
    const scale = Math.max(...values.coefficients.map((c) => Math.abs(c.estimate)));
    values.coefficients.forEach((c, j) => {
      expectClose(result.coefficients[j].estimate, c.estimate, TOL, `${c.name} estimate`, scale * 1e-4);
      expectClose(result.coefficients[j].se, c.se, TOL, `${c.name} SE`);
    });
  });

  it("covariance of the visits (a subject with every visit)", () => {
    expectAllClose(result.covariance.matrix.flat(), values.covariance.flat(), TOL, "covariance");
  });

  it("fitted values, residuals and normalized residuals", () => {
    expectAllClose(result.observations.fitted, values.fitted, TOL, "fitted");
    expectAllClose(result.observations.residual, values.residual, TOL, "residual");
    expectAllClose(
      result.observations.normalizedResidual,
      values.normalizedResidual,
      TOL,
      "normalized residual",
    );
  });

  it.runIf(values.means !== undefined)(
    "adjusted means and contrasts per visit with Satterthwaite df (emmeans)",
    () => {
      const am = result.adjustedMeans;
      expect(am).not.toBeNull();
      for (const m of values.means ?? []) {
        const ours = am?.means.find((x) => x.level === m.level && x.visit === m.visit);
        expect(ours, `${m.level} at ${m.visit}`).toBeDefined();
        expectClose(ours?.estimate, m.estimate, TOL, `mean ${m.level} ${m.visit}`);
        expectClose(ours?.se, m.se, TOL, `mean SE ${m.level} ${m.visit}`);
        expectClose(ours?.df, m.df, DF_TOL, `mean df ${m.level} ${m.visit}`);
        expectClose(ours?.df, m.emmeansDf, EMMEANS_DF_TOL, `mean df ${m.level} ${m.visit} (emmeans)`);
      }
      for (const c of values.contrasts ?? []) {
        const label = c.label.replace(" - ", " vs ");
        const ours = am?.contrasts.find((x) => x.label === label && x.visit === c.visit);
        expect(ours, `${label} at ${c.visit}`).toBeDefined();
        expectClose(ours?.estimate, c.estimate, TOL, `contrast ${label} ${c.visit}`, 1e-3);
        expectClose(ours?.se, c.se, TOL, `contrast SE ${label} ${c.visit}`);
        expectClose(ours?.df, c.df, DF_TOL, `contrast df ${label} ${c.visit}`);
        expectClose(ours?.df, c.emmeansDf, EMMEANS_DF_TOL, `contrast df ${label} ${c.visit} (emmeans)`);
      }
      // emmeans' revpairwise: every pair, later level minus earlier; the engine's pairwise list
      // holds the pairs without the reference arm
      const between = (values.pairwise ?? []).filter(
        (x) => !x.label.includes(" - Placebo") && !x.label.includes(" - Male") && !x.label.startsWith("Male"),
      );
      expect(between.length).toBe(name.startsWith("trial") ? 5 : 0);
      expect(am?.pairwise.length).toBe(between.length);
      for (const c of between) {
        const label = c.label.replace(" - ", " vs ");
        const ours = am?.pairwise.find((x) => x.label === label && x.visit === c.visit);
        expect(ours, `${label} at ${c.visit}`).toBeDefined();
        expectClose(ours?.estimate, c.estimate, TOL, `pairwise ${label} ${c.visit}`, 1e-3);
        expectClose(ours?.se, c.se, TOL, `pairwise SE ${label} ${c.visit}`);
        expectClose(ours?.df, c.df, DF_TOL, `pairwise df ${label} ${c.visit}`);
      }
    },
  );
});

describe("headless command with a repeated-measures model", () => {
  const ROOT_DIR = join(import.meta.dirname, "..", "..");
  const run = (args: string[]) =>
    new Promise<{ code: number; stdout: string; stderr: string }>((resolve) => {
      execFile(
        join(ROOT_DIR, "node_modules", ".bin", "tsx"),
        [join(ROOT_DIR, "app", "cli.ts"), ...args],
        { cwd: ROOT_DIR },
        (err, stdout, stderr) => {
          resolve({ code: err ? (typeof err.code === "number" ? err.code : 1) : 0, stdout, stderr });
        },
      );
    });

  it("prints the documented keys with R's values (fixture tests/fixtures/mmrm-trial.csv)", async () => {
    const name = "trial-unstructured-reml";
    const { values } = load(name);
    const out = await run([
      "fit",
      "--data",
      join(ROOT_DIR, "tests", "fixtures", "mmrm-trial.csv"),
      "--model",
      join(ROOT, "models", `${name}.json`),
    ]);
    expect(out.code, out.stderr).toBe(0);
    const answer = JSON.parse(out.stdout) as {
      caution: string;
      covariance: {
        structure: string;
        converged: boolean;
        iterations: number;
        logLik: number;
        aic: number;
        matrix: number[][];
        correlation: number[][];
        visits: string[];
      };
      coefficients: { name: string; estimate: number; se: number; df: number }[];
      adjustedMeans: { means: { level: string; visit: string }[]; contrasts: { visit: string }[] };
      observations: {
        row: number;
        id: string;
        visit: string;
        fitted: number;
        residual: number;
        normalizedResidual: number;
      }[];
      subjects: { id: string; cooksDistance: number; treatmentChange: number[] }[];
    };
    expect(answer.caution).toMatch(/qualified statistical and medical review/);
    expect(answer.covariance.structure).toBe("unstructured");
    expect(answer.covariance.converged).toBe(true);
    expect(answer.covariance.visits).toEqual(["Week 2", "Week 4", "Week 8", "Week 12", "Week 16"]);
    expectClose(answer.covariance.logLik, values.logLik, TOL, "logLik");
    expectAllClose(answer.covariance.matrix.flat(), values.covariance.flat(), TOL, "covariance");
    expect(answer.covariance.correlation[2][2]).toBeCloseTo(1, 12);
    answer.coefficients.forEach((c, j) => {
      expectClose(c.se, values.coefficients[j].se, TOL, `${c.name} SE`);
      expect(c.df).toBeGreaterThan(0);
    });
    expect(answer.adjustedMeans.means.length).toBe(15);
    expect(answer.adjustedMeans.contrasts.every((c) => typeof c.visit === "string")).toBe(true);
    expect(Object.keys(answer.observations[0])).toEqual([
      "row",
      "id",
      "visit",
      "fitted",
      "residual",
      "normalizedResidual",
    ]);
    expectAllClose(
      answer.observations.map((o) => o.normalizedResidual),
      values.normalizedResidual,
      TOL,
      "normalized residual",
    );
    expect(Object.keys(answer.subjects[0])).toEqual(["id", "cooksDistance", "treatmentChange"]);
    expect(answer.subjects[0].treatmentChange.length).toBe(2);
  });

  it("refuses a bad repeated key with one error line and exit 2", async () => {
    const out = await run([
      "fit",
      "--data",
      join(ROOT_DIR, "tests", "fixtures", "mmrm-trial.csv"),
      "--model",
      join(ROOT_DIR, "tests", "fixtures", "mmrm-bad-structure.json"),
    ]);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(
      /^error: repeated-measures model specification is not valid at "repeated.covariance"/,
    );
  });
});

// Kenward–Roger: pbkrtest (vcovAdj, get_Lb_ddf, KRmodcomp) and emmeans (lmer.df = "kenward-roger")
// on lme4's random-intercept fit, which is the compound-symmetry model; lmer's REML log-likelihood
// equals the settled compound-symmetry value to 3e-12 (generate-lmer.R). Agreement 1e-5
// relative for estimates, adjusted SEs, df and the F test (no numerical derivatives on either side).
// The Satterthwaite F test of several rows against lmerTest's contestMD on the same fit (its
// Hessian by numDeriv, ours by finite differences: df at 1e-4).
describe("lme4 random-intercept fit (compound symmetry): Kenward–Roger (pbkrtest) and Satterthwaite F (lmerTest)", () => {
  const kr = JSON.parse(
    readFileSync(join(ROOT, "values-lmer", "trial-compound-symmetry-reml.json"), "utf8"),
  ) as {
    coefficients: { name: string; estimate: number; se: number; df: number }[];
    treatmentByVisit: { statistic: number; numeratorDf: number; denominatorDf: number };
    satterthwaiteTreatmentByVisit: { statistic: number; numeratorDf: number; denominatorDf: number };
    means: { level: string; visit: string; estimate: number; se: number; df: number }[];
    contrasts: { label: string; visit: string; estimate: number; se: number; df: number }[];
  };
  const { spec, table } = load("trial-compound-symmetry-reml");
  const withKr = {
    ...(spec as { repeated: object }),
    repeated: { ...(spec as { repeated: object }).repeated, df: "kenward-roger" },
  };
  const result = fitRepeatedModel(withKr, table);

  it("adjusted covariance and df of every coefficient", () => {
    expect(result.coefficientCovarianceType).toBe("Kenward–Roger adjusted");
    kr.coefficients.forEach((c, j) => {
      expectClose(result.coefficients[j].estimate, c.estimate, TOL, `${c.name} estimate`, 1e-3);
      expectClose(result.coefficients[j].se, c.se, TOL, `${c.name} adjusted SE`);
      expectClose(result.coefficients[j].df, c.df, TOL, `${c.name} df`);
    });
  });

  it("the treatment-by-visit F test (KRmodcomp)", () => {
    const t = result.tests.treatmentByVisit;
    expect(t?.numeratorDf).toBe(kr.treatmentByVisit.numeratorDf);
    expectClose(t?.statistic, kr.treatmentByVisit.statistic, TOL, "F");
    expectClose(t?.denominatorDf, kr.treatmentByVisit.denominatorDf, TOL, "denominator df");
  });

  it("visit means and contrasts (emmeans)", () => {
    for (const m of kr.means) {
      const ours = result.adjustedMeans?.means.find((x) => x.level === m.level && x.visit === m.visit);
      expectClose(ours?.estimate, m.estimate, TOL, `mean ${m.level} ${m.visit}`);
      expectClose(ours?.se, m.se, TOL, `mean SE ${m.level} ${m.visit}`);
      expectClose(ours?.df, m.df, TOL, `mean df ${m.level} ${m.visit}`);
    }
    for (const c of kr.contrasts) {
      const label = c.label.replace(" - ", " vs ");
      const ours = result.adjustedMeans?.contrasts.find((x) => x.label === label && x.visit === c.visit);
      expectClose(ours?.estimate, c.estimate, TOL, `contrast ${label} ${c.visit}`, 1e-3);
      expectClose(ours?.se, c.se, TOL, `contrast SE ${label} ${c.visit}`);
      expectClose(ours?.df, c.df, TOL, `contrast df ${label} ${c.visit}`);
    }
  });

  it("Satterthwaite F test of several rows (lmerTest contestMD, Fai and Cornelius; df 1e-4)", () => {
    const sat = kr.satterthwaiteTreatmentByVisit;
    const t = fitRepeatedModel(spec, table).tests.treatmentByVisit;
    expect(t?.numeratorDf).toBe(sat.numeratorDf);
    expectClose(t?.statistic, sat.statistic, TOL, "F");
    expectClose(t?.denominatorDf, sat.denominatorDf, DF_TOL, "denominator df");
  });

  it("is refused for a structure that is not linear in its parameters", () => {
    const { spec: ar1 } = load("trial-ar1-reml");
    const s = {
      ...(ar1 as { repeated: object }),
      repeated: { ...(ar1 as { repeated: object }).repeated, df: "kenward-roger" },
    };
    expect(() => fitRepeatedModel(s, table)).toThrow(
      /Kenward–Roger degrees of freedom are available for the unstructured, compound-symmetry and Toeplitz structures, not for "ar1"/,
    );
  });
});
