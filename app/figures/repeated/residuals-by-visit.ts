/**
 * Normalized residuals against the marginal fitted values, one strip per visit in visit order: does
 * each visit's band stay level around zero and about as tall as the others? The strips sit side by
 * side in one plot (a frame of the results page has one width to fill); within a strip the fitted
 * values run from the visit's lowest to its highest, and the strip's heading gives its residuals'
 * standard deviation. Visits are told apart by place and name, never by colour. Supports the spread
 * check (Brown–Forsythe across visit-by-arm cells).
 */
import type { TopLevelSpec } from "vega-lite";
import { loessCurve } from "~/engine/loess";
import {
  asSpec,
  cellsLayer,
  count,
  dataOf,
  frame,
  NO_ARIA,
  ONE,
  PALETTE,
  pointMark,
  SCHEMA,
  statusEncoding,
  title,
  tooltip,
  zeroRule,
} from "../shared/look";
import { defineFigure } from "../shared/module";
import { checkOf } from "../shared/source";
import { axisBins, densityCells, finiteExtent, round } from "../shared/summaries";
import {
  BEYOND,
  DENSE_FROM,
  DENSE_POINTS,
  WITHIN,
  type DensityCell,
  type FigureBase,
  type PointStatus,
  type SpecOptions,
  type SubjectRef,
} from "../shared/types";
import {
  flaggedSubjects,
  NORMALIZED,
  NORMALIZED_AXIS,
  recordRef,
  recordsMarked,
  repeatedBase,
  repeatedResult,
} from "./repeated-source";

export interface VisitStrip {
  visit: string;
  /** 0-based position of the visit; its strip spans [index + STRIP_MARGIN, index + 1 − STRIP_MARGIN] on the x axis. */
  index: number;
  records: number;
  /** Sample SD of the visit's normalized residuals (about 1 when the covariance model holds). */
  sd: number | null;
  lowFitted: number | null;
  highFitted: number | null;
  /** The strip's heading: "Week 4 · SD 1.02". */
  heading: string;
}

export interface ResidualsByVisitRow extends SubjectRef {
  visit: string;
  /** Where the record sits on the x axis: its visit's strip, placed by its fitted value within the visit. */
  slot: number;
  fitted: number;
  residual: number;
  status: PointStatus;
}

export interface ResidualsByVisitData extends FigureBase {
  figure: "repeated_residuals_fitted";
  strips: VisitStrip[];
  rows: ResidualsByVisitRow[];
  /** Loess smoother (span 0.75) of each visit's residuals on its fitted values, in strip coordinates. */
  smooth: { visit: string; x: number; y: number }[];
  /** The spread check's p-value, when it was computed. */
  spreadTest: { statistic: string; p: number | null } | null;
  /** Dense figures: the records not drawn one by one, as counts in grid cells. */
  cells?: DensityCell[];
}

/** Space left on each side of a strip, in visit units, so neighbouring strips stay apart. */
export const STRIP_MARGIN = 0.08;

/** A strip's x position for fitted value f of a visit whose fitted values run from lo to hi. */
export function slotOf(index: number, f: number, lo: number, hi: number): number {
  const share = hi > lo ? (f - lo) / (hi - lo) : 0.5;
  return index + STRIP_MARGIN + (1 - 2 * STRIP_MARGIN) * share;
}

function sampleSd(v: readonly number[]): number | null {
  if (v.length < 2) return null;
  const m = v.reduce((s, x) => s + x, 0) / v.length;
  return Math.sqrt(v.reduce((s, x) => s + (x - m) ** 2, 0) / (v.length - 1));
}

export function residualsByVisitSpec(d: ResidualsByVisitData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const names = JSON.stringify(d.strips.map((s) => s.visit));
  const x = {
    field: "slot",
    type: "quantitative",
    title: `Visit; within each, marginal fitted value of ${d.response}, lowest to highest (${d.responseUnit})`,
    scale: { domain: [0, Math.max(1, d.strips.length)], nice: false, zero: false },
    axis: {
      values: d.strips.map((s) => s.index + 0.5),
      labelExpr: `${names}[floor(datum.value)]`,
      grid: false,
      ticks: false,
    },
  };
  const y = { field: "residual", type: "quantitative", title: NORMALIZED_AXIS };
  const spread = d.spreadTest
    ? `Spread check: ${d.spreadTest.statistic}.`
    : "The plan does not check the spread of the residuals.";
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "Do the residuals stay level and equally spread at every visit?",
      "in every visit's strip an even band around zero, mostly within ±2, with a flat brass smoother; strips about equally tall (SD near 1).",
      [
        `Normalized residuals (each subject's residuals scaled by the fitted covariance of its visits), one point per record; a strip per visit, fitted values increasing left to right within it. ${spread}`,
        ...(d.dense
          ? [
              `${count(d.dense.total)} records: shading counts the records in each cell; triangles: the records of the ${count(d.dense.beyond)} subjects beyond the influence threshold${d.dense.drawn < d.dense.beyond ? ` (${count(d.dense.drawn)} drawn)` : ""}.`,
            ]
          : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.cells ? [cellsLayer(d.cells, "Strip position", NORMALIZED)] : []),
      // the strips' edges, drawn once each
      {
        data: { values: d.strips.slice(1).map((s) => ({ edge: s.index })) },
        mark: { type: "rule", color: PALETTE.rule, strokeWidth: 1, ...NO_ARIA },
        encoding: { x: { field: "edge", type: "quantitative" } },
      },
      zeroRule("y"),
      {
        data: ONE,
        mark: { type: "rule", color: PALETTE.rule, strokeDash: [2, 3], strokeWidth: 1, ...NO_ARIA },
        encoding: { y: { datum: 2 } },
      },
      {
        data: ONE,
        mark: { type: "rule", color: PALETTE.rule, strokeDash: [2, 3], strokeWidth: 1, ...NO_ARIA },
        encoding: { y: { datum: -2 } },
      },
      {
        mark: pointMark(),
        encoding: {
          x,
          y,
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "visit", title: "Visit", type: "nominal" },
            { field: "fitted", title: "Marginal fitted value" },
            { field: "residual", title: NORMALIZED },
          ]),
        },
      },
      {
        data: { values: d.smooth },
        mark: { type: "line", color: PALETTE.accent, strokeWidth: 2, ...NO_ARIA },
        encoding: {
          x: { field: "x", type: "quantitative" },
          y: { field: "y", type: "quantitative" },
          detail: { field: "visit", type: "nominal" },
        },
      },
      // each strip's heading at the top of the plot: its visit and the SD of its residuals
      {
        data: { values: d.strips.map((s) => ({ at: s.index + 0.5, heading: s.heading })) },
        mark: {
          type: "text",
          baseline: "top",
          y: 2,
          fontSize: 10,
          color: PALETTE.inkSoft,
          ...NO_ARIA,
        },
        encoding: { x: { field: "at", type: "quantitative" }, text: { field: "heading", type: "nominal" } },
      },
    ],
  });
}

export const residualsByVisit = defineFigure<ResidualsByVisitData>({
  key: "repeated_residuals_fitted",
  checks: ["repeated_spread"],
  data(source, opts) {
    const r = repeatedResult(source, "repeated_residuals_fitted");
    const obs = r.observations;
    const visits = r.covariance.visits;
    const flagged = flaggedSubjects(source, r);
    const byVisit = visits.map(() => [] as number[]);
    obs.visit.forEach((v, i) => byVisit[visits.indexOf(v)]?.push(i));
    const strips: VisitStrip[] = visits.map((visit, index) => {
      const idx = byVisit[index];
      const [lo, hi] = idx.length ? finiteExtent(idx.map((i) => obs.fitted[i])) : [NaN, NaN];
      const sd = sampleSd(idx.map((i) => obs.normalizedResidual[i]));
      return {
        visit,
        index,
        records: idx.length,
        sd: sd === null ? null : round(sd),
        lowFitted: idx.length ? round(lo) : null,
        highFitted: idx.length ? round(hi) : null,
        heading: sd === null ? visit : `${visit} · SD ${sd.toFixed(2)}`,
      };
    });
    const slot = obs.fitted.map((f, i) => {
      const k = visits.indexOf(obs.visit[i]);
      return slotOf(k, f, strips[k].lowFitted ?? f, strips[k].highFitted ?? f);
    });
    const statusOf = (i: number): PointStatus => (flagged.has(obs.id[i]) ? BEYOND : WITHIN);
    // from DENSE_FROM records: the flagged subjects' records one by one (largest Cook's distance first), the rest as counts
    let drawn: number[] = obs.row.map((_, i) => i);
    let dense: ResidualsByVisitData["dense"];
    let cells: DensityCell[] | undefined;
    if (r.n >= DENSE_FROM) {
      const cooks = new Map(r.subjects.map((s) => [s.id, s.cooksDistance]));
      const beyond = drawn.filter((i) => flagged.has(obs.id[i]));
      beyond.sort((a, b) => (cooks.get(obs.id[b]) ?? 0) - (cooks.get(obs.id[a]) ?? 0) || a - b);
      drawn = beyond.slice(0, DENSE_POINTS).sort((a, b) => a - b);
      const kept = new Set(drawn);
      const rest = obs.row.map((_, i) => i).filter((i) => !kept.has(i));
      cells = densityCells(slot, obs.normalizedResidual, rest, {
        x: axisBins(slot, 48),
        y: axisBins(obs.normalizedResidual, 24),
      });
      dense = { total: r.n, beyond: beyond.length, drawn: drawn.length };
    }
    const rows = drawn.map((i) => ({
      ...recordRef(r, i, opts.withSubjectIds),
      visit: obs.visit[i],
      slot: round(slot[i]),
      fitted: round(obs.fitted[i]),
      residual: round(obs.normalizedResidual[i]),
      status: statusOf(i),
    }));
    const smooth = strips.flatMap((s) => {
      const idx = byVisit[s.index];
      // a smoother needs enough records to mean something
      if (idx.length < 10 || s.lowFitted === null || s.highFitted === null) return [];
      return loessCurve(
        idx.map((i) => obs.fitted[i]),
        idx.map((i) => obs.normalizedResidual[i]),
        0.75,
        40,
      ).map((p) => ({
        visit: s.visit,
        x: round(slotOf(s.index, p.x, s.lowFitted as number, s.highFitted as number)),
        y: round(p.y),
      }));
    });
    const spread = checkOf(source, "repeated_spread");
    return {
      figure: "repeated_residuals_fitted",
      ...repeatedBase(r, opts),
      strips,
      rows,
      smooth,
      spreadTest: spread ? { statistic: spread.statistic, p: spread.numbers?.p ?? null } : null,
      ...(dense ? { dense, cells } : {}),
    };
  },
  spec: residualsByVisitSpec,
  words: {
    caption: "Normalized residuals against marginal fitted values, a strip per visit",
    shows:
      "each record's normalized residual against its marginal fitted value, one strip per visit in visit order with a loess smoother and the strip's residual standard deviation",
    healthy:
      "in every visit an even band around zero within about ±2, flat smoothers, and strips of similar height",
  },
  marked: (d) => recordsMarked(d.rows),
});
