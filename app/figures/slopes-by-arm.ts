/**
 * Slopes of a covariate by treatment arm: does the covariate act alike in every arm (homogeneity
 * of slopes, the ANCOVA assumption; for a generalized linear model, homogeneity of the treatment
 * effect across the covariate on the link scale)? Points: each subject's component plus residual
 * for the covariate (working residual on the link scale for a GLM), by arm; lines: each arm's own
 * least-squares slope through them, and the model's common slope. Parallel lines mean the
 * model's single slope serves every arm.
 */
import { INTERACTION_JOIN } from "~/engine/coefficient-names";
import type { TopLevelSpec } from "vega-lite";
import {
  asSpec,
  cellsLayer,
  dataOf,
  denseLine,
  frame,
  NO_ARIA,
  PALETTE,
  pText,
  SCHEMA,
  title,
  tooltip,
  type Json,
} from "./shared/look";
import { defineFigure } from "./shared/module";
import { linkScale, linkUnit } from "./shared/residual-words";
import {
  cellsFor,
  cellsOf,
  denseSelection,
  FigureUnavailableError,
  requireTerm,
  subjectsOf,
  unitOf,
  who,
} from "./shared/source";
import { round } from "./shared/summaries";
import type { DensityCell, FigureBase, PointStatus, SpecOptions, SubjectRef } from "./shared/types";

export interface SlopeRow extends SubjectRef {
  arm: string;
  x: number;
  partial: number;
  status: PointStatus;
}
export interface ArmSlope {
  arm: string;
  slope: number;
  /** The arm's line at its smallest and largest covariate value. */
  ends: { x: number; y: number }[];
}
export interface SlopesByArmData extends FigureBase {
  figure: "slopes_by_arm";
  treatment: string;
  term: string;
  termUnit: string;
  /** Arms in order, reference first. */
  arms: string[];
  slopes: ArmSlope[];
  /** The model's common slope, drawn through the mean of every subject. */
  common: { slope: number; ends: { x: number; y: number }[] };
  /**
   * GLM only: the vertical range shown, the middle 90% of the subjects' values widened to hold the
   * lines (working residuals of a 0/1 or count endpoint reach far out and would flatten the lines);
   * `outside` counts the subjects beyond it, which the subtitle states.
   */
  window?: { domain: [number, number]; outside: number };
  /** The test of this covariate's interaction with the treatment, as the rerun computed it. */
  test: { name: string; p: number } | null;
  rows: SlopeRow[];
  /** Dense figures: the subjects of every arm not drawn one by one (the lines still use every subject). */
  cells?: DensityCell[];
}

const ARM_COLOURS = [PALETTE.ink, PALETTE.accent, "#3d7a8a", "#7a5c99", "#8a8f9c"];
const ARM_SHAPES = ["circle", "square", "diamond", "triangle-down", "cross"];
const ARM_DASHES = [
  [1, 0],
  [6, 3],
  [2, 2],
  [8, 2, 2, 2],
  [4, 4],
];

/** Least-squares line of y on x: slope and the line's value at the ends of x. */
function leastSquares(
  x: readonly number[],
  y: readonly number[],
): { slope: number; ends: { x: number; y: number }[] } | null {
  const n = x.length;
  if (n < 2) return null;
  const mx = x.reduce((a, b) => a + b, 0) / n;
  const my = y.reduce((a, b) => a + b, 0) / n;
  let sxy = 0;
  let sxx = 0;
  for (let i = 0; i < n; i++) {
    sxy += (x[i] - mx) * (y[i] - my);
    sxx += (x[i] - mx) ** 2;
  }
  if (!(sxx > 0)) return null;
  const slope = sxy / sxx;
  const lo = Math.min(...x);
  const hi = Math.max(...x);
  return { slope, ends: [lo, hi].map((v) => ({ x: round(v), y: round(my + slope * (v - mx)) })) };
}

export function slopesByArmSpec(d: SlopesByArmData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const x = { field: "x", type: "quantitative", title: `${d.term} (${d.termUnit})`, scale: { zero: false } };
  const yTitle = d.glm
    ? `Component + working residual (${linkUnit(d)})`
    : `Component plus residual (${d.responseUnit})`;
  const y = {
    field: "partial",
    type: "quantitative",
    title: yTitle,
    ...(d.window ? { scale: { domain: d.window.domain, nice: false } } : {}),
  };
  const arms = d.arms;
  const colour = {
    field: "arm",
    type: "nominal",
    scale: { domain: arms, range: ARM_COLOURS.slice(0, arms.length) },
    legend: { title: `Arm (${d.treatment})` },
  };
  const lines: Json[] = d.slopes.map((s) => ({
    data: { values: s.ends.map((e) => ({ ...e, arm: s.arm })) },
    mark: {
      type: "line",
      strokeWidth: 2.8,
      strokeDash: ARM_DASHES[arms.indexOf(s.arm) % ARM_DASHES.length],
      ...NO_ARIA,
    },
    encoding: {
      x: { field: "x", type: "quantitative" },
      y: { field: "y", type: "quantitative" },
      color: colour,
    },
  }));
  const slopeWords = d.slopes.map((s) => `${s.arm} ${s.slope.toPrecision(3)}`).join(", ");
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      `Does ${d.term} act alike in every arm?`,
      "the arms' lines run parallel to each other and to the model's common slope.",
      [
        `Lines: each arm's own least-squares slope (${slopeWords}); grey: the model's common slope ${d.common.slope.toPrecision(3)}.${d.glm ? ` On the link scale, ${linkScale(d)}.` : ""}`,
        d.test
          ? `${d.test.name}: p ${pText(d.test.p)}.`
          : `No test of ${d.treatment} × ${d.term} was computed.`,
        ...(d.window
          ? [
              `The axis shows the middle 90% of the subjects; ${d.window.outside} beyond it are not drawn (the lines use every subject).`,
            ]
          : []),
        ...denseLine(
          d,
          "shading counts the subjects of every arm in each cell; the lines use every subject",
          "points",
        ),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.cells ? [cellsLayer(d.cells, d.term, "Component + residual")] : []),
      {
        mark: {
          type: "point",
          filled: false,
          strokeWidth: 1,
          // a dense figure draws only the subjects beyond a threshold one by one: they stand out
          opacity: d.dense ? 0.9 : 0.4,
          size: d.dense ? 24 : 16,
          ...NO_ARIA,
        },
        encoding: {
          x,
          y,
          color: colour,
          shape: {
            field: "arm",
            type: "nominal",
            scale: { domain: arms, range: ARM_SHAPES.slice(0, arms.length) },
            legend: { title: `Arm (${d.treatment})` },
          },
          tooltip: tooltip(d, [
            { field: "arm", title: "Arm", type: "nominal" },
            { field: "x", title: d.term },
            { field: "partial", title: "Component + residual" },
          ]),
        },
      },
      {
        data: { values: d.common.ends },
        mark: { type: "line", color: PALETTE.inkSoft, strokeWidth: 1.4, opacity: 0.8, ...NO_ARIA },
        encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } },
      },
      ...lines,
    ],
  });
}

export const slopesByArm = defineFigure<SlopesByArmData>({
  key: "slopes_by_arm",
  checks: ["homogeneity_of_slopes", "treatment_homogeneity_glm"],
  perTerm: "continuous",
  needsTable: true,
  // the covariate whose slopes differ most between the arms (smallest p of its own test)
  defaultTerm(source) {
    const r = source.result;
    const tests =
      r.kind === "linear"
        ? (r.tests.homogeneityOfSlopes?.byCovariate ?? []).map((c) => ({ term: c.covariate, p: c.p }))
        : r.kind === "glm"
          ? (r.checks.homogeneityOfTreatmentEffect?.byCovariate ?? []).map((c) => ({
              term: c.term.split(INTERACTION_JOIN).pop() ?? c.term,
              p: c.p,
            }))
          : [];
    // slopes are drawn for continuous covariates only
    const continuous = new Set(
      r.kind === "cox" || r.kind === "repeated"
        ? []
        : r.variables.filter((v) => v.kind === "continuous").map((v) => v.name),
    );
    const ranked = tests
      .filter((t) => continuous.has(t.term) && t.p !== null && Number.isFinite(t.p))
      .sort((a, c) => (a.p ?? 1) - (c.p ?? 1));
    return ranked[0]?.term;
  },
  data(source, opts) {
    const { r, b, influential, statusOf } = subjectsOf(source, "slopes_by_arm", opts);
    const treatment = r.spec.treatment;
    if (!treatment)
      throw new FigureUnavailableError("the model names no treatment, so there are no arms to compare");
    const t = requireTerm(r, opts.term, true);
    const partial = r.observations.partialResiduals.find((p) => p.term === t.name);
    if (!partial) throw new FigureUnavailableError(`the rerun stored no partial residuals for "${t.name}"`);
    const arm = requireTerm(r, treatment, false);
    const arms = arm.levels ?? [];
    const armOf = cellsFor(r, opts.table, treatment, "slopes_by_arm");
    const x = cellsFor(r, opts.table, t.name, "slopes_by_arm").map(Number);
    const ok = x.map((_, i) => i).filter((i) => Number.isFinite(x[i]) && Number.isFinite(partial.values[i]));
    const slopes = arms.flatMap((a) => {
      const idx = ok.filter((i) => armOf[i] === a);
      const fit = leastSquares(
        idx.map((i) => x[i]),
        idx.map((i) => partial.values[i]),
      );
      return fit ? [{ arm: a, ...fit, slope: round(fit.slope) }] : [];
    });
    const all = leastSquares(
      ok.map((i) => x[i]),
      ok.map((i) => partial.values[i]),
    );
    const coef = r.coefficients.find((c) => c.term === t.name)?.estimate ?? all?.slope ?? NaN;
    // the common line: the model's coefficient through the centre of every subject
    const mx = ok.reduce((s, i) => s + x[i], 0) / Math.max(1, ok.length);
    const my = ok.reduce((s, i) => s + partial.values[i], 0) / Math.max(1, ok.length);
    const lo = Math.min(...ok.map((i) => x[i]));
    const hi = Math.max(...ok.map((i) => x[i]));
    const common = {
      slope: round(coef),
      ends: [lo, hi].map((v) => ({ x: round(v), y: round(my + coef * (v - mx)) })),
    };
    // the test of this covariate's slopes by arm, as the rerun computed it (the check itself tests them jointly)
    const lin =
      r.kind === "linear"
        ? r.tests.homogeneityOfSlopes?.byCovariate.find((c) => c.covariate === t.name)
        : undefined;
    const glm =
      r.kind === "glm"
        ? r.checks.homogeneityOfTreatmentEffect?.byCovariate.find(
            (c) => c.term === `${treatment} by ${t.name}`,
          )
        : undefined;
    const test =
      lin && lin.p !== null
        ? { name: `F test of the ${treatment} × ${t.name} slopes`, p: lin.p }
        : glm && glm.p !== null && Number.isFinite(glm.p)
          ? { name: `Likelihood-ratio test of ${treatment} × ${t.name}`, p: glm.p }
          : null;
    // from DENSE_FROM subjects: the subjects beyond a threshold one by one, the others as cell counts
    const dense = denseSelection(r, influential);
    const rows = ok
      .filter((i) => !dense || dense.drawn.has(i))
      .map((i) => ({
        ...who(r, i, opts.withSubjectIds),
        arm: armOf[i],
        x: round(x[i]),
        partial: round(partial.values[i]),
        status: statusOf(i),
      }));
    let window: SlopesByArmData["window"];
    if (r.kind === "glm") {
      const sorted = ok.map((i) => partial.values[i]).sort((a, c) => a - c);
      const q = (p: number) =>
        sorted[Math.min(sorted.length - 1, Math.max(0, Math.round(p * (sorted.length - 1))))];
      const ends = [...slopes.flatMap((s) => s.ends.map((e) => e.y)), ...common.ends.map((e) => e.y)];
      const lo = Math.min(q(0.05), ...ends);
      const hi = Math.max(q(0.95), ...ends);
      const pad = (hi - lo) * 0.08 || 1;
      const domain: [number, number] = [round(lo - pad), round(hi + pad)];
      window = {
        domain,
        outside: ok.filter((i) => partial.values[i] < domain[0] || partial.values[i] > domain[1]).length,
      };
    }
    const shown = window
      ? rows.filter((row) => row.partial >= window.domain[0] && row.partial <= window.domain[1])
      : rows;
    return {
      figure: "slopes_by_arm",
      ...b,
      treatment,
      term: t.name,
      termUnit: unitOf(t.name, opts),
      arms,
      slopes,
      common,
      test,
      rows: shown,
      ...(window ? { window } : {}),
      ...(dense
        ? {
            dense: dense.summary,
            // counted within the axis window of a GLM, as the points are shown
            cells: cellsOf(
              x,
              partial.values.map((v) =>
                !window || (v >= window.domain[0] && v <= window.domain[1]) ? v : NaN,
              ),
              dense,
            ),
          }
        : {}),
    };
  },
  spec: slopesByArmSpec,
  words: {
    caption: "Covariate slopes by treatment arm",
    shows:
      "each subject's component plus residual for the covariate, by arm, with each arm's own least-squares slope and the model's common slope",
    healthy: "the arms' lines parallel to each other and to the common slope",
  },
  marked(d) {
    return `Slopes by arm: ${d.slopes.map((s) => `${s.arm} ${s.slope.toPrecision(3)}`).join(", ")}; the model's common slope ${d.common.slope.toPrecision(3)}.`;
  },
});
