/**
 * The four repeated-measures figures, their data checked against values computed outside the
 * product: R (tests/reference/figures/repeated-figures.R, from nlme's gls answers for the invented
 * trial tests/fixtures/mmrm-trial.csv): the Q-Q plot's theoretical quantiles qnorm(ppoints(n)) (R's
 * plotting positions), its sorted normalized residuals (nlme's, settled by direct computation) and
 * qqline's line through the quartiles; each visit's SD of the normalized residuals; the adjusted
 * means' 95% intervals estimate ± qt(0.975, df)·SE from emmeans' values; and the influence line
 * 4/m. Each figure compiles with Vega-Lite and names subjects only for viewers who may see them.
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { compile } from "vega-lite";
import { expectWellFormedFigure } from "../support/figure-checks";
import { mmrmDocument } from "../support/mmrm-document";
import { expectAllClose, expectClose } from "../reference/compare";
import { figureData, figureListOf, figureOfCheck, figureSpec, plotsSubjects } from "~/figures/registry";
import { ppoints } from "~/figures/repeated/normal-quantiles";
import { BEYOND, DENSE_FROM, DENSE_POINTS } from "~/figures/shared/types";
import type { RepeatedResult } from "~/engine/repeated/repeated-model";
import { normalQuantile } from "~/engine/distributions";

const R = JSON.parse(
  readFileSync(join(import.meta.dirname, "../reference/figures/repeated-figures.json"), "utf8"),
) as {
  records: number;
  subjects: number;
  theoretical: number[];
  theoretical7: number[];
  sorted: number[];
  qqline: { slope: number; intercept: number };
  visitSd: Record<string, number>;
  means: { level: string; visit: string; estimate: number; lower: number; upper: number }[];
  cooksLine: number;
};

const doc = mmrmDocument();
/** The same trial with one subject's change raised by 20 at every visit, so the influence check flags subjects. */
const withOutlier = mmrmDocument({ outlier: "S-007" });
const result = doc.result as RepeatedResult;
/** Figure rows are rounded to six significant digits (shared/summaries.ts round). */
const ROUNDED = 1e-5;

describe("the repeated-measures checks' figures", () => {
  it("each check of the catalogue shows its own module's figure", () => {
    expect(figureOfCheck({ key: "repeated_spread", outcome: "within" })).toBe("repeated_residuals_fitted");
    expect(figureOfCheck({ key: "repeated_normality", outcome: "within" })).toBe("repeated_qq");
    expect(figureOfCheck({ key: "repeated_primary_visit", outcome: "finding" })).toBe("repeated_means");
    expect(figureOfCheck({ key: "repeated_influence", outcome: "finding" })).toBe("repeated_influence");
    expect(figureOfCheck({ key: "repeated_convergence", outcome: "finding" })).toBeNull();
  });

  it("the appendix and report list the four figures of a repeated-measures rerun", () => {
    expect(figureListOf(doc).map((f) => f.figure)).toEqual([
      "repeated_means",
      "repeated_residuals_fitted",
      "repeated_qq",
      "repeated_influence",
    ]);
  });
});

describe("normal Q-Q of the normalized residuals (R: qnorm(ppoints(n)), qqline)", () => {
  it("uses R's plotting positions: Blom's a = 3/8 up to 10 values, 1/2 beyond", () => {
    expect(R.records).toBe(result.n);
    expect(ppoints(7)).toHaveLength(7);
    expectAllClose(
      ppoints(7).map((p) => normalQuantile(p)),
      R.theoretical7,
      1e-12,
      "qnorm(ppoints(7))",
    );
  });

  it("plots nlme's sorted normalized residuals against qnorm(ppoints(523)), with qqline's line", () => {
    const d = figureData(doc, "repeated_qq", { withSubjectIds: false });
    if (d.figure !== "repeated_qq") throw new Error("unexpected");
    expectAllClose(
      d.rows.map((r) => r.theoretical),
      R.theoretical,
      ROUNDED,
      "theoretical",
    );
    expectAllClose(
      d.rows.map((r) => r.sample),
      R.sorted,
      ROUNDED,
      "sorted normalized residuals",
    );
    expectClose(d.line.slope, R.qqline.slope, 1e-5, "qqline slope");
    // the intercept is near zero: held to 1e-5 of the residuals' unit scale
    expectClose(d.line.intercept, R.qqline.intercept, 1e-5, "qqline intercept", 1);
    expect(d.rows.every((r) => r.subject === null && r.row === null)).toBe(true);
    const t = expectWellFormedFigure(figureSpec(d));
    expect(t.text).toMatch(/^Do the residuals follow the normal line\? Reading: /);
  });
});

describe("normalized residuals against fitted values, a strip per visit", () => {
  it("has a strip per visit in visit order with R's SD of the visit's normalized residuals", () => {
    const d = figureData(doc, "repeated_residuals_fitted", { withSubjectIds: true });
    if (d.figure !== "repeated_residuals_fitted") throw new Error("unexpected");
    expect(d.strips.map((s) => s.visit)).toEqual(["Week 2", "Week 4", "Week 8", "Week 12", "Week 16"]);
    for (const s of d.strips) expectClose(s.sd, R.visitSd[s.visit], ROUNDED, `SD at ${s.visit}`);
    expect(d.rows).toHaveLength(result.n);
    // every record sits inside its own visit's strip
    for (const row of d.rows) {
      const k = d.strips.findIndex((s) => s.visit === row.visit);
      expect(row.slot).toBeGreaterThan(k);
      expect(row.slot).toBeLessThan(k + 1);
    }
    expect(d.rows.every((r) => r.status !== BEYOND)).toBe(true);
    expect(plotsSubjects(d)).toBe(true);
    expectWellFormedFigure(figureSpec(d));
  });

  it("marks every record of the subjects the influence check flagged", () => {
    const d = figureData(withOutlier, "repeated_residuals_fitted", { withSubjectIds: true });
    if (d.figure !== "repeated_residuals_fitted") throw new Error("unexpected");
    const flagged = new Set(
      (withOutlier.checks.find((c) => c.key === "repeated_influence")?.flagged ?? []).map((f) => f.id),
    );
    expect(flagged.has("S-007")).toBe(true);
    const marked = d.rows.filter((r) => r.status === BEYOND);
    expect(new Set(marked.map((r) => r.subject))).toEqual(flagged);
    const r = withOutlier.result as RepeatedResult;
    expect(marked.length).toBe(r.observations.id.filter((id) => flagged.has(id)).length);
  });
});

describe("adjusted means over the visits by arm", () => {
  it("draws the rerun's means with emmeans' 95% intervals (R's qt on the Satterthwaite df) and the subjects per visit", () => {
    const d = figureData(doc, "repeated_means", { withSubjectIds: true });
    if (d.figure !== "repeated_means") throw new Error("unexpected");
    expect(d.arms[0]).toBe("Placebo");
    expect(d.visits).toEqual(result.covariance.visits);
    expect(d.rows).toHaveLength(R.means.length);
    for (const m of R.means) {
      const row = d.rows.find((x) => x.arm === m.level && x.visit === m.visit);
      expect(row, `${m.level} at ${m.visit}`).toBeDefined();
      expectClose(row!.estimate, m.estimate, 1e-5, `mean ${m.level} ${m.visit}`);
      expectClose(row!.lower, m.lower, 1e-5, `lower ${m.level} ${m.visit}`, 1);
      expectClose(row!.upper, m.upper, 1e-5, `upper ${m.level} ${m.visit}`, 1);
      // and exactly the result's own interval (rounded for drawing)
      const own = result.adjustedMeans!.means.find((x) => x.level === m.level && x.visit === m.visit)!;
      expectClose(row!.lower, own.lower, ROUNDED, "own lower", 1);
      const subjects = result.counts.find((c) => c.level === m.level && c.visit === m.visit)!.subjects;
      expect(row!.subjects).toBe(subjects);
    }
    // visits in order along x, subjects falling over the visits (monotone dropout)
    for (const arm of d.arms) {
      const rows = d.rows.filter((x) => x.arm === arm);
      expect(rows.map((x) => x.visit)).toEqual(d.visits);
      const n = rows.map((x) => x.subjects);
      expect(n).toEqual([...n].sort((a, b) => b - a));
    }
    expect(d.primaryVisit).toBe("Week 16");
    expect(plotsSubjects(d)).toBe(false);
    expect(JSON.stringify(d)).not.toMatch(/S-\d{3}/);
    expectWellFormedFigure(figureSpec(d));
  });
});

describe("subject influence", () => {
  it("draws every subject's Cook's distance against the line 4/m (no subject of the trial beyond it)", () => {
    const d = figureData(doc, "repeated_influence", { withSubjectIds: true });
    if (d.figure !== "repeated_influence") throw new Error("unexpected");
    expect(d.subjects).toBe(R.subjects);
    expectClose(d.threshold.value, R.cooksLine, 1e-12, "4/m");
    expect(d.defaultThreshold).toBe(false);
    expect(d.rows).toHaveLength(result.subjects.length);
    d.rows.forEach((r, i) => expectClose(r.cooks, result.subjects[i].cooksDistance, ROUNDED, `cooks ${i}`));
    expect(d.rows.every((r) => r.labelRank === null && r.status !== BEYOND)).toBe(true);
    expectWellFormedFigure(figureSpec(d));
  });

  it("numbers the most influential subjects beyond 4/m and names them for viewers who see subjects", () => {
    const seen = figureData(withOutlier, "repeated_influence", { withSubjectIds: true });
    if (seen.figure !== "repeated_influence") throw new Error("unexpected");
    const r = withOutlier.result as RepeatedResult;
    const numbered = seen.rows
      .filter((r) => r.labelRank !== null)
      .sort((a, b) => a.labelRank! - b.labelRank!);
    expect(numbered.length).toBeGreaterThan(0);
    expect(numbered.every((r) => r.cooks > R.cooksLine)).toBe(true);
    expect(numbered.length).toBeLessThanOrEqual(3);
    const largest = [...r.subjects].sort((a, b) => b.cooksDistance - a.cooksDistance)[0];
    expect(largest.id).toBe("S-007");
    expect(numbered[0].label).toBe("S-007");
    expect(JSON.stringify(figureSpec(seen))).toMatch(/S-007/);
    expectWellFormedFigure(figureSpec(seen));
  });

  it("names no subject for a viewer who may not see subjects: ranks in the labels, no ids anywhere", () => {
    for (const figure of ["repeated_influence", "repeated_residuals_fitted", "repeated_qq"] as const) {
      const d = figureData(withOutlier, figure, { withSubjectIds: false });
      const text = JSON.stringify({ d, spec: figureSpec(d) });
      expect(text, figure).not.toMatch(/S-\d{3}/);
    }
    const hidden = figureData(withOutlier, "repeated_influence", { withSubjectIds: false });
    if (hidden.figure !== "repeated_influence") throw new Error("unexpected");
    expect(hidden.rows.find((r) => r.labelRank === 1)?.label).toBe("rank 1");
  });

  it("falls back to the catalogue's 4/m when the plan does not check influence", () => {
    const d = figureData({ ...doc, checks: [] }, "repeated_influence", { withSubjectIds: false });
    if (d.figure !== "repeated_influence") throw new Error("unexpected");
    expect(d.defaultThreshold).toBe(true);
    expectClose(d.threshold.value, R.cooksLine, 1e-12, "default 4/m");
    expect(compile(figureSpec(d)).spec.marks?.length).toBeGreaterThan(0);
  });
});

describe("many records and subjects: thinned as the other figures are (DENSE_FROM)", () => {
  // the trial's records and subjects copied under new ids until the figures are dense; the
  // figures read only the stored columns, so no refit is needed
  const copies = Math.ceil(DENSE_FROM / result.subjects.length);
  const tag = (id: string, k: number) => `${id}-${k}`;
  const o = result.observations;
  const big: RepeatedResult = {
    ...result,
    n: o.row.length * copies,
    subjectCount: result.subjects.length * copies,
    observations: {
      row: Array.from({ length: copies }, (_, k) => o.row.map((r) => r + k * 1000)).flat(),
      id: Array.from({ length: copies }, (_, k) => o.id.map((id) => tag(id, k))).flat(),
      visit: Array.from({ length: copies }, () => o.visit).flat(),
      level: Array.from({ length: copies }, () => o.level).flat(),
      fitted: Array.from({ length: copies }, () => o.fitted).flat(),
      residual: Array.from({ length: copies }, () => o.residual).flat(),
      normalizedResidual: Array.from({ length: copies }, () => o.normalizedResidual).flat(),
    },
    subjects: Array.from({ length: copies }, (_, k) =>
      result.subjects.map((s) => ({ ...s, id: tag(s.id, k) })),
    ).flat(),
  };
  const flaggedIds = big.subjects.filter((s) => s.cooksDistance > 0.02).map((s) => s.id);
  const source = {
    result: big,
    checks: [
      {
        ...doc.checks.find((c) => c.key === "repeated_influence")!,
        outcome: "finding" as const,
        threshold: "4/m = 0.02",
        numbers: {
          measure: "largest",
          statistic: 0.03,
          df: null,
          threshold: 0.02,
          compares: "statistic above" as const,
          p: null,
        },
        flagged: flaggedIds.map((id, k) => ({ rank: k + 1, row: 0, id, value: 0.03 })),
      },
    ],
  };

  it("draws the flagged subjects' records one by one and counts the rest in cells", () => {
    const d = figureData(source, "repeated_residuals_fitted", { withSubjectIds: false });
    if (d.figure !== "repeated_residuals_fitted") throw new Error("unexpected");
    expect(d.dense?.total).toBe(big.n);
    expect(d.rows.length).toBeLessThanOrEqual(DENSE_POINTS);
    expect(d.rows.every((r) => r.status === BEYOND)).toBe(true);
    expect((d.cells ?? []).reduce((s, c) => s + c.count, 0)).toBe(big.n - d.rows.length);
    expectWellFormedFigure(figureSpec(d));
  });

  it("keeps the Q-Q plot's tails whole and thins its middle", () => {
    const d = figureData(source, "repeated_qq", { withSubjectIds: false });
    if (d.figure !== "repeated_qq") throw new Error("unexpected");
    expect(d.thinning?.tail).toBe(100);
    expect(d.rows.length).toBeLessThan(big.n);
    const sorted = [...big.observations.normalizedResidual].sort((a, b) => a - b);
    expectAllClose(
      d.rows.slice(0, 100).map((r) => r.sample),
      sorted.slice(0, 100),
      ROUNDED,
      "lower tail",
    );
    expectWellFormedFigure(figureSpec(d));
  });

  it("draws the most influential subjects one by one and the others as block maxima", () => {
    const d = figureData(source, "repeated_influence", { withSubjectIds: false });
    if (d.figure !== "repeated_influence") throw new Error("unexpected");
    expect(d.subjects).toBe(big.subjects.length);
    expect(d.dense?.beyond).toBe(flaggedIds.length);
    expect(d.rows.length).toBe(Math.min(DENSE_POINTS, flaggedIds.length));
    expect(d.blocks?.length).toBeGreaterThan(0);
    expectWellFormedFigure(figureSpec(d));
  });
});
