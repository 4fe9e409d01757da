// The diagnostic figures and the sensitivity comparison: every specification compiles with
// Vega-Lite's own compile(), has a title with a subtitle saying what a healthy picture looks
// like, titled axes and hover details naming the subject. Built on the demo study's primary
// model (chg ~ arm + base + stratum + region + sex + age on the full analysis set).
import { describe, expect, it } from "vitest";
import { expectWellFormedFigure, titleOf } from "../support/figure-checks";
import { compile, type TopLevelSpec } from "vega-lite";
import { generateDemoDataset } from "~/.server/demo/demo-dataset";
import { blomQuantiles, FigureUnavailableError } from "~/figures/shared/source";
import { figureData, figureSpec, plotsSubjects, type FigureData } from "~/figures/registry";
import { forestPoints, forestSpec } from "~/figures/forest";
import { rewrapTitle } from "~/figures/shared/look";
import type { QqData } from "~/figures/qq";
import type { FigureKey } from "~/engine/checks";
import { demoPrimaryRerun } from "../support/demo-primary-rerun";

const ds = generateDemoDataset();
const columns: Record<string, string[]> = {};
for (const c of ds.columns) columns[c] = ds.rows.map((r) => r[c]);
const { doc, table, result } = demoPrimaryRerun(columns);

const FIGURES: [FigureKey, string?][] = [
  ["residuals_fitted"],
  ["residuals_covariate", "base"],
  ["residuals_covariate", "region"],
  ["partial_residuals", "age"],
  ["qq"],
  ["influence"],
  ["leverage_residual"],
  ["spread_by_arm"],
];

interface Layer {
  data?: unknown;
  mark?: unknown;
  encoding?: Record<
    string,
    { title?: unknown; field?: string; value?: unknown } | Record<string, unknown>[] | undefined
  >;
}

function layersOf(spec: TopLevelSpec): Layer[] {
  return (spec as unknown as { layer: Layer[] }).layer;
}

/** A layer's hover table: deferred to usermeta.tooltips under the key the layer names (specs.ts, deferTooltips). */
function tooltipOf(spec: TopLevelSpec, layer: Layer): { field: string; title: string }[] {
  const key = (layer.encoding?.tooltip as unknown as { value?: string } | undefined)?.value;
  const tips =
    (spec as unknown as { usermeta?: { tooltips: Record<string, { field: string; title: string }[]> } })
      .usermeta?.tooltips ?? {};
  return key ? (tips[key] ?? []) : [];
}

describe("diagnostic figure specifications", () => {
  for (const [figure, term] of FIGURES) {
    const name = `${figure}${term ? ` (${term})` : ""}`;
    it(`${name} compiles and has a title, a healthy-picture subtitle, axis titles and hover details naming the subject`, () => {
      const data: FigureData = figureData(doc, figure, { term, withSubjectIds: true, table });
      expect(data.rows.length).toBe(result.n);
      const spec = figureSpec(data, { forPrint: true });
      expectWellFormedFigure(spec);
      // the layers of subjects (the figure's rows, no data of their own) name the subject on hover
      const withTooltip = layersOf(spec).filter((l) => tooltipOf(spec, l).length > 0 && !l.data);
      expect(withTooltip.length).toBeGreaterThan(0);
      for (const l of withTooltip) {
        const fields = tooltipOf(spec, l).map((f) => f.field);
        expect(fields.slice(0, 2)).toEqual(["subject", "row"]);
        expect(fields).toContain("status");
      }
      if (!plotsSubjects(data)) throw new Error(`${figure} should draw subjects`);
      const first = data.rows[0];
      expect(typeof first.subject).toBe("string");
      expect(typeof first.row).toBe("number");
    });
  }

  it("rewraps the subtitle for a narrow frame without losing a word", () => {
    const spec = figureSpec(figureData(doc, "qq", { withSubjectIds: true, table }));
    const narrow = titleOf(rewrapTitle(spec, 300));
    const words = (lines: string[]) => lines.join(" ").split(/\s+/);
    expect(words(narrow.subtitle)).toEqual(words(titleOf(spec).subtitle));
    for (const line of narrow.subtitle) expect(line.length).toBeLessThanOrEqual(48);
  });

  it("names no subject when the viewer may not see subjects", () => {
    const data = figureData(doc, "influence", { withSubjectIds: false, table });
    if (!plotsSubjects(data)) throw new Error("influence should draw subjects");
    expect(data.rows.every((r) => r.subject === null && r.row === null)).toBe(true);
    const spec = figureSpec(data);
    const fields = layersOf(spec).flatMap((l) => tooltipOf(spec, l).map((f) => f.field));
    expect(fields).toContain("cooks");
    expect(fields).not.toContain("subject");
    expect(JSON.stringify(data)).not.toContain("QMT301-");
  });

  it("the influence figure draws the plan's 4/n line and marks the planted subject", () => {
    const data = figureData(doc, "influence", { withSubjectIds: true, table });
    if (data.figure !== "influence") throw new Error("wrong figure");
    expect(data.threshold?.value).toBeCloseTo(4 / result.n, 4);
    const top = data.rows.reduce((a, b) => (b.cooks > a.cooks ? b : a));
    expect(top.subject).toBe("QMT301-0217");
    expect(top.label).toBe("QMT301-0217");
    expect(top.status).toBe("beyond a planned threshold");
  });

  it("says what to do when a figure cannot be drawn", () => {
    expect(() =>
      figureData(doc, "partial_residuals", { term: "region", withSubjectIds: true, table }),
    ).toThrow(FigureUnavailableError);
    expect(() => figureData(doc, "residuals_covariate", { withSubjectIds: true, table })).toThrow(
      /choose a covariate/,
    );
    expect(() => figureData(doc, "spread_by_arm", { withSubjectIds: true })).toThrow(/table rows/);
  });

  it("the Q-Q plot's theoretical quantiles are Blom's, qnorm((i − 0.375)/(n + 0.25))", () => {
    // Blom 1958, Statistical Estimates and Transformed Beta-Variables; values from R 4.2.2:
    // qnorm(((1:10) - 0.375)/10.25), and for n = 422 at i = 1, 2, 211, 421, 422.
    const r10 = [
      -1.54663527139923, -1.000490545619315, -0.6554235052344267, -0.3754617702355184, -0.1225808438888024,
      0.1225808438888025, 0.3754617702355184, 0.6554235052344267, 1.000490545619315, 1.54663527139923,
    ];
    blomQuantiles(10).forEach((q, i) => expect(q).toBeCloseTo(r10[i], 12));
    expect(result.n).toBe(422);
    const qq = figureData(doc, "qq", { withSubjectIds: true, table }) as QqData;
    const at = (i: number) => qq.rows[i - 1].theoretical;
    const r422: [number, number][] = [
      [1, -2.971827295584534],
      [2, -2.665086070635915],
      [211, -0.002968184671696452],
      [421, 2.665086070635918],
      [422, 2.971827295584525],
    ];
    for (const [i, v] of r422) expect(Math.abs(at(i) - v)).toBeLessThan(1e-5); // rows are rounded to six significant digits
    // sorted residuals, and the title carries the engine's plain-words reading
    for (let i = 1; i < qq.rows.length; i++)
      expect(qq.rows[i].sample).toBeGreaterThanOrEqual(qq.rows[i - 1].sample);
    const spec = figureSpec(qq);
    expect(titleOf(spec).text).toContain(result.qqShape.reading);
    expect(titleOf(spec).subtitle.join(" ")).toContain(result.qqShape.summary.slice(0, 30));
  });
});

describe("sensitivity comparison (forest-style)", () => {
  const c = result.contrasts?.find((x) => x.level === "Lorvanitide 120 mg");
  if (!c) throw new Error("no contrast");
  const rows = [
    {
      label: "Excluding 1 subject",
      estimate: c.estimate + 0.5,
      lower: c.lower + 0.5,
      upper: c.upper + 0.5,
      prespecified: false,
      primary: false,
    },
    {
      label: "Robust (HC3) standard errors",
      estimate: c.estimate,
      lower: c.hc3.lower,
      upper: c.hc3.upper,
      prespecified: true,
      primary: false,
    },
    {
      label: "Primary analysis as planned",
      estimate: c.estimate,
      lower: c.lower,
      upper: c.upper,
      prespecified: true,
      primary: true,
    },
  ];

  it("puts the primary first and says 'primary' and 'not pre-specified' in words", () => {
    const points = forestPoints(rows);
    expect(points[0].primary).toBe(true);
    expect(points[0].axisLabel).toMatch(/^Primary/);
    expect(points.find((p) => !p.prespecified)?.axisLabel).toMatch(/^Not pre-specified: /);
  });

  it("compiles, with a healthy-picture subtitle, an axis title with the contrast and unit, and hover details naming the analysis", () => {
    const spec = forestSpec(rows, c.label, { unit: "points" });
    const vg = compile(spec).spec;
    expect(vg.marks?.length ?? 0).toBeGreaterThan(0);
    expect(titleOf(spec).subtitle.join(" ")).toMatch(/^Healthy: /);
    const axisTitles = (vg.axes ?? [])
      .map((a) => a.title)
      .filter(Boolean)
      .map(String);
    expect(axisTitles.some((t) => t.includes(c.label) && t.includes("(points)"))).toBe(true);
    const tip = layersOf(spec).flatMap((l) => tooltipOf(spec, l).map((f) => f.field));
    expect(tip).toEqual(expect.arrayContaining(["label", "estimate", "lower", "upper"]));
  });
});
