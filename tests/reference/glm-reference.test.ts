// Generalized linear model reruns compared with R: stats::glm and its influence functions,
// MASS::glm.nb (negative binomial) and MASS's profile-likelihood intervals, sandwich::vcovHC,
// car::vif, emmeans counterfactual grids (standardized arm means and risk differences, Ge et al.
// delta method) and the Ye et al. (2023) variance written out in R. Values were produced by
// tests/reference/generate.R and are committed. Agreement: relative 1e-6 for estimates and
// observation-level values (elements smaller than 1% of a column's largest magnitude are held to
// 1e-6 of that 1%); 1e-5 for p-values, which magnify the last digits of the standard errors by
// about z²; 1e-3 for profile intervals (R interpolates the profile on a grid with a spline, so
// its bounds carry about four digits).
import { readFileSync, readdirSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { fitModel, type GlmResult } from "~/engine";
import { readCsvText } from "~/engine-io/read-csv";
import { expectAllClose, expectClose } from "./compare";

const ROOT = join(import.meta.dirname, ".");
const TOL = 1e-6;
const PVAL = 1e-5;
const FLOOR = 1e-2;

interface RGlmCase {
  case: string;
  source: string;
  data: string;
  model: string;
  n: number;
  rank: number;
  excluded: number;
  coefficients: {
    rName: string;
    estimate: number;
    se: number;
    statistic: number;
    p: number;
    lower: number;
    upper: number;
    profileLower: number | null;
    profileUpper: number | null;
  }[];
  robustSE: Record<"HC0" | "HC1" | "HC2" | "HC3", number[]>;
  fit: {
    deviance: number;
    nullDeviance: number;
    logLik: number | null;
    aic: number | null;
    dispersion: number;
    pearsonChiSquare: number;
    dfResidual: number;
    theta: number | null;
    thetaSE: number | null;
  };
  observations: Record<string, number[]> & { dfbetas: number[][]; partialResiduals: number[][] };
  linearity: { term: string; statistic: number; df: number; p: number }[] | null;
  homogeneity: {
    joint: { statistic: number; df: number; p: number };
    byCovariate: { term: string; statistic: number; df: number; p: number }[];
  } | null;
  vif: { term: string; gvif: number; df: number; adjusted: number }[] | null;
  /** stats::vcov (summary.glm's dispersion), by rows. */
  vcov: number[][];
  smooths: { term: string; x: number[]; y: number[] }[] | null;
  hosmerLemeshow: { statistic: number; df: number; p: number } | null;
  marginal: {
    logRatio: { estimate: number; se: number }[];
    logOddsRatio: { estimate: number; se: number }[] | null;
    means: {
      level: string;
      estimate: number;
      se: number;
      lower: number;
      upper: number;
      robustSe: number | null;
    }[];
    differences: { label: string; estimate: number; se: number; p: number }[];
    /** False where the script judged the variance of Ye et al. not to apply (non-canonical link, weights). */
    robustApplies: boolean;
    robustDifferenceSe: number[] | null;
    robustLogRatioSe: number[] | null;
  } | null;
}

const cases: RGlmCase[] = readdirSync(join(ROOT, "values"))
  .filter((f) => f.startsWith("glm-") && f.endsWith(".json"))
  .sort()
  .map((f) => JSON.parse(readFileSync(join(ROOT, "values", f), "utf8")) as RGlmCase);

function rerun(c: RGlmCase): GlmResult {
  const spec: unknown = JSON.parse(readFileSync(join(ROOT, c.model), "utf8"));
  const result = fitModel(spec, readCsvText(readFileSync(join(ROOT, c.data), "utf8")));
  if (result.kind !== "glm") throw new Error("expected a GLM result");
  return result;
}

describe.each(cases.map((c) => [c.case, c] as const))("GLM reference case %s", (_name, c) => {
  const result = rerun(c);

  it(`sizes and rows (${c.source})`, () => {
    expect(result.n).toBe(c.n);
    expect(result.rank).toBe(c.rank);
    expect(result.excluded).toBe(c.excluded);
    expect(result.observations.row).toEqual(c.observations.row);
    expect(result.fit.converged).toBe(true);
  });

  it("coefficients, standard errors, Wald statistics, p and intervals (summary.glm, confint.default)", () => {
    c.coefficients.forEach((rc, j) => {
      const ours = result.coefficients[j];
      const label = `${ours.name} (R: ${rc.rName})`;
      expectClose(ours.estimate, rc.estimate, TOL, `${label} estimate`);
      expectClose(ours.se, rc.se, TOL, `${label} se`);
      expectClose(ours.statistic, rc.statistic, TOL, `${label} statistic`);
      expectClose(ours.p, rc.p, PVAL, `${label} p`);
      expectClose(ours.lower, rc.lower, TOL, `${label} lower`);
      expectClose(ours.upper, rc.upper, TOL, `${label} upper`);
    });
  });

  it("profile-likelihood intervals (MASS confint)", () => {
    const prof = result.profileIntervals;
    if (!prof) return;
    c.coefficients.forEach((rc, j) => {
      if (rc.profileLower === null) return;
      expectClose(prof[j].lower, rc.profileLower, 1e-3, `${prof[j].name} profile lower`, Math.abs(rc.se));
      expectClose(prof[j].upper, rc.profileUpper, 1e-3, `${prof[j].name} profile upper`, Math.abs(rc.se));
    });
  });

  it("sandwich standard errors HC0–HC3 (sandwich::vcovHC)", () => {
    for (const t of ["HC0", "HC1", "HC2", "HC3"] as const)
      expectAllClose(result.robustSE[t], c.robustSE[t], TOL, t);
  });

  it("deviance, null deviance, log-likelihood, AIC, dispersion, θ", () => {
    expectClose(result.fit.deviance, c.fit.deviance, TOL, "deviance");
    expectClose(result.fit.nullDeviance, c.fit.nullDeviance, TOL, "null deviance");
    expectClose(result.fit.logLik, c.fit.logLik, TOL, "logLik");
    expectClose(result.fit.aic, c.fit.aic, TOL, "AIC");
    expectClose(result.fit.dispersion, c.fit.dispersion, TOL, "dispersion");
    expectClose(result.fit.pearsonChiSquare, c.fit.pearsonChiSquare, TOL, "Pearson χ²");
    if (c.fit.theta !== null) {
      expectClose(result.fit.theta, c.fit.theta, TOL, "theta");
      expectClose(result.fit.thetaSE, c.fit.thetaSE, 1e-4, "theta SE");
    }
  });

  it("observation-level diagnostics (residuals(), hatvalues, rstandard, likelihood residual, cooks.distance, dfbetas)", () => {
    const o = result.observations;
    const r = c.observations;
    for (const key of [
      "fitted",
      "residual",
      "pearson",
      "devianceResidual",
      "leverage",
      "studentizedInternal",
      "studentizedExternal",
      "cooksDistance",
    ] as const) {
      expectAllClose(o[key], r[key], TOL, key, FLOOR);
    }
    r.dfbetas.forEach((col, j) =>
      expectAllClose(o.dfbetas[j], col, TOL, `DFBETAS ${result.coefficients[j].name}`, FLOOR),
    );
    r.partialResiduals.forEach((col, j) =>
      expectAllClose(o.partialResiduals[j].values, col, TOL, `partial ${o.partialResiduals[j].term}`, FLOOR),
    );
  });

  it("likelihood-ratio checks: linearity (quadratic term) and homogeneity of the treatment effect (anova.glm)", () => {
    (c.linearity ?? []).forEach((l, i) => {
      expect(result.checks.linearity[i].term).toBe(l.term);
      expectClose(result.checks.linearity[i].statistic, l.statistic, 1e-5, `${l.term} statistic`, 1e-6);
      expect(result.checks.linearity[i].df).toBe(l.df);
      expectClose(result.checks.linearity[i].p, l.p, 1e-5, `${l.term} p`);
    });
    if (c.homogeneity) {
      const h = result.checks.homogeneityOfTreatmentEffect;
      expect(h).toBeDefined();
      expectClose(h?.joint.statistic, c.homogeneity.joint.statistic, 1e-5, "joint interaction LRT");
      expectClose(h?.joint.p, c.homogeneity.joint.p, 1e-5, "joint interaction p");
      c.homogeneity.byCovariate.forEach((b, i) => {
        expectClose(h?.byCovariate[i].statistic, b.statistic, 1e-5, `${b.term} LRT`);
        expect(h?.byCovariate[i].df).toBe(b.df);
      });
    }
  });

  it("LOWESS smooth of partial residuals (stats::lowess) and Hosmer–Lemeshow by tenths of predicted risk", () => {
    (c.smooths ?? []).forEach((sm, i) => {
      const ours = result.checks.linearitySmooth[i];
      expect(ours.term).toBe(sm.term);
      expectAllClose(ours.x, sm.x, TOL, `smooth x ${sm.term}`);
      expectAllClose(ours.y, sm.y, TOL, `smooth y ${sm.term}`, FLOOR);
    });
    if (c.hosmerLemeshow) {
      expectClose(result.checks.calibration?.statistic, c.hosmerLemeshow.statistic, TOL, "Hosmer–Lemeshow");
      expect(result.checks.calibration?.df).toBe(c.hosmerLemeshow.df);
      expectClose(result.checks.calibration?.p, c.hosmerLemeshow.p, PVAL, "Hosmer–Lemeshow p");
    }
  });

  it("coefficient covariance matrix (stats::vcov)", () => {
    expect(result.covariance.length).toBe(c.vcov.length);
    c.vcov.forEach((row, i) => expectAllClose(result.covariance[i], row, TOL, `vcov row ${i}`));
  });

  it("generalized VIF (car::vif)", () => {
    if (!c.vif) return;
    c.vif.forEach((v, i) => expectClose(result.vif[i].gvif, v.gvif, TOL, `GVIF ${v.term}`));
  });

  it("marginal treatment effects: standardized means and differences (emmeans counterfactuals), Ye et al. variance", () => {
    const m = c.marginal;
    if (!m) return;
    const ours = result.marginalEffects;
    expect(ours).not.toBeNull();
    if (!ours) return;
    expect(ours.robustVariance.applies).toBe(m.robustApplies);
    if (!m.robustApplies) {
      expect(
        ours.means.every((mm) => mm.robustSe === null) && ours.contrasts.every((k) => k.robust === null),
      ).toBe(true);
    }
    m.means.forEach((mm, a) => {
      expect(ours.means[a].level).toBe(mm.level);
      expectClose(ours.means[a].estimate, mm.estimate, TOL, `mean ${mm.level}`);
      expectClose(ours.means[a].se, mm.se, TOL, `mean SE ${mm.level}`);
      if (mm.robustSe !== null) expectClose(ours.means[a].robustSe, mm.robustSe, TOL, `Ye SE ${mm.level}`);
    });
    const binary = result.family === "binomial";
    const first = binary ? ours.contrasts.filter((k) => k.measure === "risk difference") : [];
    const ratios = ours.contrasts.filter((k) => k.measure === (binary ? "risk ratio" : "rate ratio"));
    if (binary) {
      m.differences.forEach((d, i) => {
        expectClose(first[i].estimate, d.estimate, TOL, `difference ${d.label}`);
        expectClose(first[i].se, d.se, TOL, `difference SE ${d.label}`);
        expectClose(first[i].p, d.p, PVAL, `difference p ${d.label}`);
        if (m.robustDifferenceSe)
          expectClose(first[i].robust?.se, m.robustDifferenceSe[i], TOL, `difference Ye SE ${d.label}`);
      });
    }
    (m.robustLogRatioSe ?? []).forEach((se, i) =>
      expectClose(ratios[i].robust?.se, se, TOL, `log ratio Ye SE ${i}`),
    );
    m.logRatio.forEach((lr, i) => {
      expectClose(Math.log(ratios[i].estimate), lr.estimate, TOL, `log ratio ${i}`);
      expectClose(ratios[i].se, lr.se, TOL, `log ratio SE ${i}`);
    });
    const odds = ours.contrasts.filter((k) => k.measure === "odds ratio");
    (m.logOddsRatio ?? []).forEach((lo, i) => {
      expectClose(Math.log(odds[i].estimate), lo.estimate, TOL, `log odds ratio ${i}`);
      expectClose(odds[i].se, lo.se, TOL, `log odds ratio SE ${i}`);
    });
  });
});
