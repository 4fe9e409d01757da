/**
 * Normal quantile comparison: do the residuals follow the normal line from end to end? A linear
 * model's internally studentized residuals; a generalized linear model's randomized quantile
 * residuals (Dunn and Smyth 1996, seeded in the engine, so reproducible), which are standard normal
 * under the model even for a 0/1 endpoint, where raw residuals could never be.
 */
import type { TopLevelSpec } from "vega-lite";
import {
  asSpec,
  count,
  dataOf,
  frame,
  markedSubjects,
  PALETTE,
  pointMark,
  SCHEMA,
  statusEncoding,
  title,
  tooltip,
} from "./shared/look";
import { defineFigure } from "./shared/module";
import { blomQuantiles, denseSelection, qqValues, subjectsOf, who } from "./shared/source";
import { qqKept, round } from "./shared/summaries";
import type { FigureBase, PointStatus, SpecOptions, SubjectRef } from "./shared/types";
import { quantileSorted } from "d3-array";
import { normalQuantile } from "~/engine/distributions";

export interface QqRow extends SubjectRef {
  /** Blom plotting position quantile Φ⁻¹((i − 0.375)/(n + 0.25)). */
  theoretical: number;
  /** Internally studentized residual (linear) or randomized quantile residual (GLM), sorted. */
  sample: number;
  status: PointStatus;
}
export interface QqData extends FigureBase {
  figure: "qq";
  reading: string;
  summary: string;
  /** Reference line through the quartiles (Chambers, Cleveland, Kleiner and Tukey 1983). */
  line: { slope: number; intercept: number };
  rows: QqRow[];
  /** Dense figures: how the sorted residuals were thinned (every step-th kept between the tails). */
  thinning?: { tail: number; step: number };
}

/** A dense Q-Q plot keeps this many order statistics at each end, and about this many in between. */
const QQ_TAIL = 100;
const QQ_MIDDLE = 400;

/** How a dense Q-Q plot was thinned, in words. */
function qqThinningLine(d: QqData): string[] {
  if (!d.dense || !d.thinning) return [];
  const { tail, step } = d.thinning;
  return [
    `${count(d.dense.total)} subjects: drawn are the ${tail} smallest and ${tail} largest residuals, every ${step === 1 ? "" : `${ordinal(step)} `}one in between and the subjects shown one by one in the other figures.`,
  ];
}

function ordinal(k: number): string {
  const tens = k % 100;
  const suffix =
    tens >= 11 && tens <= 13
      ? "th"
      : (({ 1: "st", 2: "nd", 3: "rd" } as Record<number, string>)[k % 10] ?? "th");
  return `${k}${suffix}`;
}

export function qqSpec(d: QqData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const first = d.rows[0]?.theoretical ?? -3;
  const last = d.rows[d.rows.length - 1]?.theoretical ?? 3;
  const line = [first, last].map((t) => ({ theoretical: t, sample: d.line.intercept + d.line.slope * t }));
  const residual = d.glm ? "Randomized quantile residual" : "Studentized residual";
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      `Do the residuals follow the normal line? Reading: ${d.reading}`,
      "the points lie along the line from end to end.",
      [
        d.summary,
        d.glm
          ? "Randomized quantile residuals (Dunn and Smyth 1996), seeded; line through the quartiles; Blom plotting positions."
          : "Line through the quartiles; Blom plotting positions.",
        ...qqThinningLine(d),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        data: { values: line },
        mark: { type: "line", color: PALETTE.accent, strokeWidth: 1.6 },
        encoding: {
          x: { field: "theoretical", type: "quantitative" },
          y: { field: "sample", type: "quantitative" },
        },
      },
      {
        mark: pointMark(),
        encoding: {
          x: {
            field: "theoretical",
            type: "quantitative",
            title: "Standard normal quantile (Blom positions)",
          },
          y: {
            field: "sample",
            type: "quantitative",
            title: d.glm ? `${residual} (z)` : `${residual} (units of σ̂)`,
          },
          ...statusEncoding(d, false),
          tooltip: tooltip(d, [
            { field: "theoretical", title: "Normal quantile" },
            { field: "sample", title: residual },
          ]),
        },
      },
    ],
  });
}

export const qq = defineFigure<QqData>({
  key: "qq",
  checks: ["shapiro_wilk"],
  data(source, opts) {
    const { r, obs, n, b, influential, statusOf } = subjectsOf(source, "qq", opts);
    const values = qqValues(r);
    const order = obs.row.map((_, i) => i).filter((i) => Number.isFinite(values[i]));
    order.sort((a, c) => values[a] - values[c] || obs.row[a] - obs.row[c]);
    const theoretical = blomQuantiles(order.length);
    const sorted = order.map((i) => values[i]);
    // reference line through the first and third quartiles (Chambers, Cleveland, Kleiner and Tukey 1983, section 6.3)
    const q1 = quantileSorted(sorted, 0.25) ?? NaN;
    const q3 = quantileSorted(sorted, 0.75) ?? NaN;
    const z1 = normalQuantile(0.25);
    const z3 = normalQuantile(0.75);
    const slope = (q3 - q1) / (z3 - z1);
    const intercept = q1 - slope * z1;
    const dense = denseSelection(r, influential);
    // a dense plot keeps the tails, the subjects drawn elsewhere one by one, and a regular thinning of the middle
    const thinned = dense
      ? qqKept(
          order.length,
          QQ_TAIL,
          QQ_MIDDLE,
          new Set(order.flatMap((i, k) => (dense.drawn.has(i) ? [k] : []))),
        )
      : null;
    const kept = thinned ? thinned.kept : order.map((_, k) => k);
    const rows: QqRow[] = kept.map((k) => ({
      ...who(r, order[k], opts.withSubjectIds),
      theoretical: round(theoretical[k]),
      sample: round(sorted[k]),
      status: statusOf(order[k]),
    }));
    const note =
      order.length < n
        ? `${n - order.length} subjects with leverage one have no studentized residual and are not shown.`
        : undefined;
    return {
      figure: "qq",
      ...b,
      reading: r.qqShape.reading,
      summary: r.qqShape.summary,
      line: { slope, intercept },
      rows,
      note,
      ...(dense && thinned ? { dense: dense.summary, thinning: { tail: QQ_TAIL, step: thinned.step } } : {}),
    };
  },
  spec: qqSpec,
  words: {
    caption: "Normal quantile plot of the residuals",
    shows:
      "the sorted residuals (studentized for a linear model, randomized quantile residuals for a generalized linear model) plotted against standard normal quantiles, with a reference line through the quartiles",
    healthy: "points close to the line, without an S-shape or bent tails",
  },
  marked: (d) => markedSubjects(d.rows),
});
