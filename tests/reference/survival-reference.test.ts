// Cox proportional hazards reruns compared with R's survival package (3.x, Debian
// r-cran-survival): coxph (eps 1e-12, so R itself is converged), summary.coxph, cox.zph,
// residuals.coxph (martingale, deviance, score, schoenfeld, scaledsch, dfbeta, dfbetas), survfit
// (Greenwood, log interval), survdiff and the concordance coxph reports. Values were produced
// by tests/reference/survival/generate.R on the open datasets the package ships (lung, veteran,
// ovarian, colon) and invented trial-shaped data with strata, ties, weights, an offset and
// clusters; they are committed. Agreement: relative 1e-6 (elements smaller than 1e-4 of a
// column's largest magnitude are held to 1e-6 of that 1e-4).
import { execFile } from "node:child_process";
import { readFileSync, readdirSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { readCsvText } from "~/engine-io/read-csv";
import { fitCoxModel, MonotoneLikelihoodError, type CoxResult } from "~/engine/survival/cox-model";
import { coxCliAnswer } from "~/engine/survival/cox-result";
import { expectAllClose, expectClose } from "./compare";

const ROOT = join(import.meta.dirname, "survival");
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
const TOL = 1e-6;

interface RTest {
  statistic: number;
  df: number;
  p: number;
}
interface RCoxCase {
  case: string;
  source: string;
  data: string;
  model: string;
  n: number;
  events: number;
  coefficients: {
    rName: string;
    estimate: number;
    se: number;
    robustSe: number | null;
    statistic: number;
    p: number;
    ratio: number;
    ratioLower: number;
    ratioUpper: number;
  }[];
  fit: { logLik: number; logLikNull: number; concordance: number };
  tests: {
    likelihoodRatio: RTest;
    wald: RTest;
    score: RTest;
    robustScore: RTest | null;
    logRank: RTest | null;
    proportionalHazards: { transform: string; terms: (RTest & { term: string })[]; global: RTest };
  };
  observations: {
    row: number[];
    martingale: number[];
    deviance: number[];
    score: number[][];
    dfbeta: number[][];
    dfbetas: number[][];
  };
  schoenfeld: { row: number[]; time: number[]; residual: number[][]; scaled: number[][] };
  survival: {
    level: string;
    stratum: string | null;
    time: number[];
    estimate: number[];
    lower: (number | null)[];
    upper: (number | null)[];
    atRisk: number[];
  }[];
}

const cases: RCoxCase[] = readdirSync(join(ROOT, "values"))
  .filter((f) => f.endsWith(".json") && !f.startsWith("monotone"))
  .sort()
  .map((f) => JSON.parse(readFileSync(join(ROOT, "values", f), "utf8")) as RCoxCase);

const read = (path: string) => readFileSync(join(ROOT, path), "utf8");

/**
 * R labels a stratum "STRAT1=HIGH, STRAT2=R1"; Plumbline names each part as a factor level
 * ("STRAT1: HIGH, STRAT2: R1", coefficient-names.ts). Maps R's label to ours; the R values stay as
 * R wrote them.
 */
function ourStratum(rLabel: string | null): string | null {
  if (rLabel === null) return null;
  return rLabel
    .split(", ")
    .map((part) => {
      const at = part.indexOf("=");
      return `${part.slice(0, at)}: ${part.slice(at + 1)}`;
    })
    .join(", ");
}

function rerun(c: RCoxCase): CoxResult {
  return fitCoxModel(JSON.parse(read(c.model)), readCsvText(read(c.data)));
}

function expectTest(
  actual: { statistic: number; df: number; p: number } | null,
  expected: RTest,
  label: string,
): void {
  expect(actual, label).not.toBeNull();
  const a = actual as RTest;
  expectClose(a.statistic, expected.statistic, TOL, `${label} statistic`);
  expect(a.df, `${label} df`).toBe(expected.df);
  expectClose(a.p, expected.p, TOL, `${label} p`);
}

describe.each(cases.map((c) => [c.case, c] as const))("Cox model %s against R's survival", (_name, c) => {
  const result = rerun(c);

  it("coefficients, standard errors (model and robust), Wald z, p and hazard ratios with intervals (coxph, summary.coxph)", () => {
    expect(result.n).toBe(c.n);
    expect(result.fit.events).toBe(c.events);
    expect(result.fit.converged).toBe(true);
    expect(result.coefficients.length).toBe(c.coefficients.length);
    c.coefficients.forEach((r, j) => {
      const row = result.coefficients[j];
      const label = `${c.case} ${r.rName}`;
      expectClose(row.estimate, r.estimate, TOL, `${label} estimate`);
      expectClose(row.se, r.se, TOL, `${label} se`);
      if (r.robustSe !== null) expectClose(row.robustSe, r.robustSe, TOL, `${label} robust se`);
      expectClose(row.statistic, r.statistic, TOL, `${label} z`);
      expectClose(row.p, r.p, TOL, `${label} p`);
      expectClose(result.ratios[j].ratio, r.ratio, TOL, `${label} hazard ratio`);
      expectClose(result.ratios[j].lower, r.ratioLower, TOL, `${label} ratio lower`);
      expectClose(result.ratios[j].upper, r.ratioUpper, TOL, `${label} ratio upper`);
    });
  });

  it("log partial likelihoods, concordance, likelihood-ratio, Wald and score tests (coxph)", () => {
    expectClose(result.fit.logLik, c.fit.logLik, TOL, "logLik");
    expectClose(result.fit.logLikNull, c.fit.logLikNull, TOL, "logLik at 0");
    expectClose(result.fit.concordance, c.fit.concordance, TOL, "concordance");
    expectTest(result.tests.likelihoodRatio, c.tests.likelihoodRatio, "likelihood ratio");
    expectTest(result.tests.wald, c.tests.wald, "Wald");
    expectTest(result.tests.score, c.tests.score, "score");
    if (c.tests.robustScore) expectTest(result.tests.robustScore, c.tests.robustScore, "robust score");
  });

  it("proportional-hazards score test per term and global (cox.zph, survival 3.x)", () => {
    const ph = result.tests.proportionalHazards;
    expect(ph.transform).toBe(c.tests.proportionalHazards.transform);
    expect(ph.terms.length).toBe(c.tests.proportionalHazards.terms.length);
    c.tests.proportionalHazards.terms.forEach((t, k) => expectTest(ph.terms[k], t, `PH ${t.term}`));
    expectTest(ph.global, c.tests.proportionalHazards.global, "PH global");
  });

  it("martingale, deviance and score residuals, DFBETA and DFBETAS (residuals.coxph)", () => {
    const o = result.observations;
    expect(o.row).toEqual(c.observations.row);
    expectAllClose(o.martingale, c.observations.martingale, TOL, "martingale");
    expectAllClose(o.deviance, c.observations.deviance, TOL, "deviance");
    c.observations.score.forEach((col, j) => expectAllClose(o.score[j], col, TOL, `score[${j}]`));
    c.observations.dfbeta.forEach((col, j) => expectAllClose(o.dfbeta[j], col, TOL, `dfbeta[${j}]`));
    c.observations.dfbetas.forEach((col, j) => expectAllClose(o.dfbetas[j], col, TOL, `dfbetas[${j}]`));
  });

  it("Schoenfeld and scaled Schoenfeld residuals at event times (residuals.coxph)", () => {
    const byRow = new Map(result.schoenfeld.map((s) => [s.row, s]));
    expect(result.schoenfeld.length).toBe(c.schoenfeld.row.length);
    const rows = c.schoenfeld.row.map((r) => byRow.get(r));
    expect(rows.every((s) => s !== undefined)).toBe(true);
    expectAllClose(
      rows.map((s) => s?.time ?? null),
      c.schoenfeld.time,
      TOL,
      "event time",
    );
    c.schoenfeld.residual.forEach((col, j) =>
      expectAllClose(
        rows.map((s) => s?.residual[j] ?? null),
        col,
        TOL,
        `schoenfeld[${j}]`,
      ),
    );
    c.schoenfeld.scaled.forEach((col, j) =>
      expectAllClose(
        rows.map((s) => s?.scaled[j] ?? null),
        col,
        TOL,
        `scaled schoenfeld[${j}]`,
      ),
    );
  });

  it("Kaplan–Meier per arm and per arm within stratum with Greenwood log intervals (survfit) and the stratified log-rank test (survdiff)", () => {
    expect(result.survival.length).toBe(c.survival.length);
    c.survival.forEach((r, k) => {
      const s = result.survival[k];
      const label = `${r.level}/${r.stratum ?? "all"}`;
      expect(s.level).toBe(r.level);
      expect(s.stratum).toBe(ourStratum(r.stratum));
      expect(s.time).toEqual(r.time);
      expect(s.atRisk).toEqual(r.atRisk);
      expectAllClose(s.estimate, r.estimate, TOL, `${label} estimate`);
      expectAllClose(s.lower, r.lower, TOL, `${label} lower`);
      expectAllClose(s.upper, r.upper, TOL, `${label} upper`);
    });
    if (c.tests.logRank) expectTest(result.tests.logRank, c.tests.logRank, "log-rank");
  });
});

describe("Cox model: monotone likelihood and the headless answer", () => {
  function attempt(name: string): unknown {
    try {
      fitCoxModel(JSON.parse(read(`models/${name}.json`)), readCsvText(read(`data/${name}.csv`)));
    } catch (err) {
      return err;
    }
    return null;
  }

  it("reports a treatment arm without events as monotone likelihood instead of fitting it (R's coxph: 'coefficient may be infinite', estimate near −28)", () => {
    const r = JSON.parse(read("values/monotone-no-events-in-arm.json")) as {
      rWarning: string;
      rEstimate: number[];
    };
    expect(r.rWarning).toMatch(/infinite/);
    expect(r.rEstimate[0]).toBeLessThan(-15);
    const error = attempt("monotone-no-events-in-arm");
    expect(error).toBeInstanceOf(MonotoneLikelihoodError);
    const e = error as MonotoneLikelihoodError;
    expect(e.terms).toEqual(["TRTP"]);
    expect(e.message).toMatch(/monotone likelihood/);
    expect(e.message).toMatch(/"TRTP: Active" towards −∞/);
  });

  it("reports a continuous covariate that ranks every event first in its risk set (R's coxph does not converge, estimate near +19)", () => {
    const r = JSON.parse(read("values/monotone-marker-ordering.json")) as {
      rWarning: string;
      rEstimate: number[];
    };
    expect(r.rWarning).toMatch(/converge/);
    expect(r.rEstimate[1]).toBeGreaterThan(10);
    const error = attempt("monotone-marker-ordering");
    expect(error).toBeInstanceOf(MonotoneLikelihoodError);
    const e = error as MonotoneLikelihoodError;
    expect(e.terms).toContain("MARKER");
    expect(e.message).toMatch(/"MARKER" towards \+∞/);
  });

  it("answers with the documented keys and the caution", () => {
    const c = cases.find((k) => k.case === "trial-breslow-cluster") as RCoxCase;
    const answer = JSON.parse(coxCliAnswer(JSON.parse(read(c.model)), readCsvText(read(c.data)))) as Record<
      string,
      unknown
    >;
    for (const key of [
      "caution",
      "coefficients",
      "ratios",
      "fit",
      "tests",
      "observations",
      "schoenfeld",
      "survival",
    ])
      expect(answer).toHaveProperty(key);
    expect(answer.caution).toMatch(/do not replace, qualified statistical and medical review/);
    const first = (answer.coefficients as Record<string, unknown>[])[0];
    expect(Object.keys(first)).toEqual([
      "name",
      "estimate",
      "se",
      "robustSe",
      "statistic",
      "p",
      "lower",
      "upper",
    ]);
    expectClose(first.robustSe as number, c.coefficients[0].robustSe, TOL, "robust se in the answer");
    const tests = answer.tests as Record<string, unknown>;
    for (const key of ["likelihoodRatio", "wald", "score", "logRank", "proportionalHazards"])
      expect(tests).toHaveProperty(key);
    const fit = answer.fit as Record<string, unknown>;
    expect(Object.keys(fit)).toEqual(
      expect.arrayContaining(["logLik", "logLikNull", "events", "concordance", "iterations"]),
    );
    const obs = (answer.observations as Record<string, unknown>[])[0];
    expect(Object.keys(obs)).toEqual(["row", "id", "martingale", "deviance", "score", "dfbeta", "dfbetas"]);
  });

  it("the headless command answers a Cox model on stdout and reports monotone likelihood as one error line (exit 2)", async () => {
    const c = cases.find((k) => k.case === "ovarian-strata-identity") as RCoxCase;
    const [ok, bad] = await Promise.all([
      runCli(["fit", "--data", join(ROOT, c.data), "--model", join(ROOT, c.model)]),
      runCli([
        "fit",
        "--data",
        join(ROOT, "data/monotone-no-events-in-arm.csv"),
        "--model",
        join(ROOT, "models/monotone-no-events-in-arm.json"),
      ]),
    ]);
    expect(ok.code, ok.stderr).toBe(0);
    const answer = JSON.parse(ok.stdout) as {
      coefficients: { estimate: number }[];
      tests: { proportionalHazards: { global: RTest } };
    };
    c.coefficients.forEach((r, j) =>
      expectClose(answer.coefficients[j].estimate, r.estimate, TOL, `CLI ${r.rName}`),
    );
    expectTest(answer.tests.proportionalHazards.global, c.tests.proportionalHazards.global, "CLI PH global");
    expect(bad.code).toBe(2);
    expect(bad.stdout).toBe("");
    expect(bad.stderr).toMatch(/^error: monotone likelihood: .*"TRTP: Active" towards −∞/);
    expect(bad.stderr.trim().split("\n").length).toBe(1);
  });
});
