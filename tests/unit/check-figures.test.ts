/**
 * Each check shows its own figure or none, and each figure module says which checks it supports:
 * DFBETAS on the treatment coefficient with ±2/√n, DFFITS with ±2√(p/n), variance inflation per
 * variable against the threshold, covariate slopes by arm for homogeneity of slopes, nothing for
 * events per variable or a check not computed. Values are checked against R (stats::lm,
 * residuals(type = "partial"), anova of the nested fits; tests/reference/figures/slopes-by-arm.R
 * writes them) on the committed trial-ancova reference case; the GLM figures name their residual
 * type on every residual axis (checked on the committed binary glm-trial-responder case).
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { compile, type TopLevelSpec } from "vega-lite";
import { expectWellFormedFigure } from "../support/figure-checks";
import { fitModel, type ModelResult } from "~/engine";
import { CHECKS, defaultChecks, evaluateChecks, type CheckOutcome } from "~/engine/checks";
import { readCsvText } from "~/engine-io/read-csv";
import { FIGURES, figureData, figureOfCheck, figureSpec } from "~/figures/registry";
import { forestSpec } from "~/figures/forest";
import { BEYOND } from "~/figures/shared/types";

const REF = join(import.meta.dirname, "../reference");
const R = JSON.parse(readFileSync(join(REF, "figures/slopes-by-arm.json"), "utf8")) as {
  arms: string[];
  slopes: Record<string, number>;
  common: number;
  jointP: number;
  dfbetasBound: number;
  dffitsBound: number;
};

function load(name: string): {
  result: ModelResult;
  checks: CheckOutcome[];
  table: { columns: Record<string, string[]>; rowNumbers: number[] };
} {
  const spec = JSON.parse(readFileSync(join(REF, "models", `${name}.json`), "utf8")) as {
    family: string;
    treatment?: string;
  };
  const csv = readCsvText(readFileSync(join(REF, "data", `${name}.csv`), "utf8"));
  const columns = Object.fromEntries(Object.entries(csv.columns).map(([k, v]) => [k, [...v]]));
  const n = Object.values(columns)[0].length;
  const table = {
    columns,
    rowNumbers: csv.rowNumbers ? [...csv.rowNumbers] : Array.from({ length: n }, (_, i) => i + 1),
  };
  const result = fitModel(spec, table);
  return {
    result,
    checks: evaluateChecks(result, defaultChecks(Boolean(spec.treatment), spec.family)),
    table,
  };
}

const linear = load("trial-ancova");
const binary = load("glm-trial-responder");

function axisTitles(spec: TopLevelSpec): string[] {
  return (compile(spec).spec.axes ?? []).map((a) => String(a.title ?? ""));
}

describe("which figure each check shows", () => {
  it("the engine's figure key of every check is the one whose module lists it (one figure a check at most)", () => {
    for (const def of CHECKS) {
      const modules = FIGURES.filter((m) => m.checks.includes(def.key));
      expect(modules.length, def.key).toBeLessThanOrEqual(1);
      expect(figureOfCheck({ key: def.key, outcome: "within" }), def.key).toBe(def.figure);
    }
  });

  it("gives DFBETAS, DFFITS, collinearity and homogeneity of slopes their own figures, and events per variable none", () => {
    expect(figureOfCheck({ key: "dfbetas_treatment", outcome: "finding" })).toBe("dfbetas");
    expect(figureOfCheck({ key: "dffits", outcome: "finding" })).toBe("dffits");
    expect(figureOfCheck({ key: "gvif", outcome: "within" })).toBe("gvif");
    expect(figureOfCheck({ key: "homogeneity_of_slopes", outcome: "within" })).toBe("slopes_by_arm");
    expect(figureOfCheck({ key: "treatment_homogeneity_glm", outcome: "within" })).toBe("slopes_by_arm");
    expect(figureOfCheck({ key: "events_per_variable", outcome: "finding" })).toBeNull();
  });

  it("shows no figure for a check that was not computed", () => {
    for (const def of CHECKS) expect(figureOfCheck({ key: def.key, outcome: "not_computed" })).toBeNull();
  });
});

describe("the checks' own figures (trial-ancova, R's lm)", () => {
  it("DFBETAS: the treatment coefficients' values by subject between ±2/√n, subjects beyond marked as the check flagged them", () => {
    const d = figureData(linear, "dfbetas", { withSubjectIds: true });
    if (d.figure !== "dfbetas" || linear.result.kind !== "linear") throw new Error("unexpected");
    expect(d.threshold?.value).toBeCloseTo(R.dfbetasBound, 4);
    expect(d.series).toEqual(linear.result.coefficients.filter((c) => c.term === "arm").map((c) => c.name));
    const j = linear.result.coefficients.findIndex((c) => c.name === d.series[0]);
    const first = d.rows.filter((r) => r.series === d.series[0]);
    expect(first.length).toBe(linear.result.n);
    first.forEach((r, i) => expect(r.value).toBeCloseTo(linear.result.observations.dfbetas[j][i], 5));
    const flagged = new Set(
      (linear.checks.find((c) => c.key === "dfbetas_treatment")?.flagged ?? []).map((f) => f.row),
    );
    const beyond = new Set(d.rows.filter((r) => r.status === BEYOND).map((r) => r.row));
    expect(beyond).toEqual(flagged);
    const t = expectWellFormedFigure(figureSpec(d));
    expect(t.text).toMatch(/\?$/);
  });

  it("DFFITS: every subject's value between ±2√(p/n)", () => {
    const d = figureData(linear, "dffits", { withSubjectIds: false });
    const r = linear.result;
    if (d.figure !== "dffits" || r.kind !== "linear") throw new Error("unexpected");
    expect(d.threshold?.value).toBeCloseTo(R.dffitsBound, 4);
    d.rows.forEach((row, i) => expect(row.value).toBeCloseTo(r.observations.dffits[i], 5));
    expect(d.rows.every((r) => r.subject === null && r.row === null)).toBe(true);
    expectWellFormedFigure(figureSpec(d));
  });

  it("variance inflation: one bar per variable on the standard-error scale against √5", () => {
    const d = figureData(linear, "gvif", { withSubjectIds: true });
    if (d.figure !== "gvif") throw new Error("unexpected");
    expect(d.rows.map((r) => r.predictor)).toEqual(linear.result.vifByPredictor.map((v) => v.predictor));
    expect(d.threshold?.value).toBeCloseTo(Math.sqrt(5), 3);
    const spec = figureSpec(d);
    expect(compile(spec).spec.marks?.length ?? 0).toBeGreaterThan(0);
    expect(JSON.stringify(spec)).not.toMatch(/GVIF\^/);
  });

  it("slopes by arm: each arm's slope of the partial residuals is R's, the common slope the model's, the F test of arm × base R's", () => {
    const d = figureData(linear, "slopes_by_arm", {
      term: "base",
      withSubjectIds: false,
      table: linear.table,
    });
    if (d.figure !== "slopes_by_arm") throw new Error("unexpected");
    expect(d.arms).toEqual(R.arms);
    for (const s of d.slopes) expect(s.slope).toBeCloseTo(R.slopes[s.arm], 5);
    expect(d.common.slope).toBeCloseTo(R.common, 5);
    expect(d.test?.p).toBeCloseTo(R.jointP, 6);
    const t = expectWellFormedFigure(figureSpec(d));
    expect(t.text).toBe("Does base act alike in every arm?");
  });
});

describe("residual figures of a binary GLM (glm-trial-responder)", () => {
  it("name the randomized quantile residual on every residual axis, and the link scale on the component-plus-residual plot", () => {
    const fitted = axisTitles(figureSpec(figureData(binary, "residuals_fitted", { withSubjectIds: false })));
    expect(fitted).toContain("Randomized quantile residual (z)");
    expect(fitted).toContain("Fitted probability of the event (0 to 1)");
    expect(fitted.join(" ")).not.toMatch(/− fitted/);
    const qq = figureSpec(figureData(binary, "qq", { withSubjectIds: false }));
    expect(axisTitles(qq)).toContain("Randomized quantile residual (z)");
    const partial = axisTitles(
      figureSpec(
        figureData(binary, "partial_residuals", { term: "base", withSubjectIds: false, table: binary.table }),
      ),
    );
    expect(partial).toContain("Component + working residual (log odds)");
    const title = JSON.stringify(
      figureSpec(
        figureData(binary, "partial_residuals", { term: "base", withSubjectIds: false, table: binary.table }),
      ),
    );
    expect(title).toMatch(/on the link scale\?/);
    expect(title).toMatch(/log odds \(logit link\)/);
  });
});

describe("sensitivity forest of a ratio", () => {
  const rows = [
    {
      label: "Primary analysis as planned",
      estimate: 0.62,
      lower: 0.45,
      upper: 0.85,
      prespecified: true,
      primary: true,
    },
    {
      label: "Excluding the subjects beyond the planned Cook's distance threshold",
      estimate: 0.58,
      lower: 0.41,
      upper: 0.82,
      prespecified: true,
      primary: false,
    },
  ];
  it("draws a rate ratio on a log axis with the reference at 1, in the words of a ratio", () => {
    const spec = forestSpec(rows, "arm: Active (rate ratio)");
    const text = JSON.stringify(spec);
    expect(text).toMatch(/"type":"log"/);
    expect(text).toMatch(/same side of 1/);
    expect(text).not.toMatch(/difference in adjusted means|same side of zero/);
    expect(text).toMatch(/"at":1/);
    expect(axisTitles(spec).some((t) => t.includes("(log scale)"))).toBe(true);
  });
  it("wraps long analysis labels instead of cutting them", () => {
    const spec = forestSpec(rows, "arm: Active (rate ratio)", { width: 360, forPrint: true });
    const labels = (spec as unknown as { datasets: { rows: { axisLabel: string }[] } }).datasets.rows.map(
      (r) => r.axisLabel,
    );
    expect(labels[1].split("\n").length).toBeGreaterThan(1);
    expect(labels[1].replace(/\n/g, " ")).toBe(rows[1].label);
  });
});
