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
    expectAllClose(result.observations.normalizedResidual, values.normalizedResidual, TOL, "normalized residual");
  });

  it.runIf(values.means !== undefined)("adjusted means and contrasts per visit with Satterthwaite df (emmeans)", () => {
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
  });
});
