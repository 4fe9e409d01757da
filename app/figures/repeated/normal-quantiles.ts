/**
 * Normal quantile comparison of a repeated-measures rerun's normalized residuals: do they follow
 * the normal line from end to end? Normalized residuals are, when the model and its covariance
 * hold, approximately independent standard normal, so the line should have slope about 1 through
 * zero. Plotting positions as R's ppoints (Blom's (i − 3/8)/(n + 1/4) up to 10 values, (i − 1/2)/n
 * beyond), the reference line through the quartiles (Chambers, Cleveland, Kleiner and Tukey 1983).
 * Supports the normality check (Shapiro–Wilk).
 */
import { quantileSorted } from "d3-array";
import type { TopLevelSpec } from "vega-lite";
import { normalQuantile } from "~/engine/distributions";
import { readQqShape } from "~/engine/qq-shape";
import {
  asSpec,
  count,
  dataOf,
  frame,
  ONE,
  PALETTE,
  pointMark,
  SCHEMA,
  statusEncoding,
  title,
  tooltip,
} from "../shared/look";
import { defineFigure } from "../shared/module";
import { checkOf } from "../shared/source";
import { qqKept, round } from "../shared/summaries";
import {
  BEYOND,
  DENSE_FROM,
  WITHIN,
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

export interface RepeatedQqRow extends SubjectRef {
  visit: string;
  theoretical: number;
  sample: number;
  status: PointStatus;
}

export interface RepeatedQqData extends FigureBase {
  figure: "repeated_qq";
  reading: string;
  summary: string;
  line: { slope: number; intercept: number };
  normalityTest: { statistic: string } | null;
  rows: RepeatedQqRow[];
  thinning?: { tail: number; step: number };
}

/** R's ppoints(n): (i − a)/(n + 1 − 2a) with a = 3/8 for n ≤ 10 and 1/2 otherwise. */
export function ppoints(n: number): number[] {
  const a = n <= 10 ? 3 / 8 : 1 / 2;
  return Array.from({ length: n }, (_, k) => (k + 1 - a) / (n + 1 - 2 * a));
}

/** A dense plot keeps this many order statistics at each end, and about this many in between. */
const QQ_TAIL = 100;
const QQ_MIDDLE = 400;

export function repeatedQqSpec(d: RepeatedQqData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const first = d.rows[0]?.theoretical ?? -3;
  const last = d.rows[d.rows.length - 1]?.theoretical ?? 3;
  const line = [first, last].map((t) => ({ theoretical: t, sample: d.line.intercept + d.line.slope * t }));
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      `Do the residuals follow the normal line? Reading: ${d.reading}`,
      "the points lie along the line from end to end, the line close to slope 1 through zero.",
      [
        d.summary,
        `${d.normalityTest ? `Normality check: ${d.normalityTest.statistic}. ` : ""}Line through the quartiles; plotting positions as R's ppoints; one point per record.`,
        ...(d.dense && d.thinning
          ? [
              `${count(d.dense.total)} records: drawn are the ${d.thinning.tail} smallest and ${d.thinning.tail} largest, every ${d.thinning.step === 1 ? "" : `${d.thinning.step}th `}one in between.`,
            ]
          : []),
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
        data: ONE,
        mark: { type: "rule", color: PALETTE.rule, strokeDash: [2, 3], strokeWidth: 1 },
        encoding: { y: { datum: 0 } },
      },
      {
        mark: pointMark(),
        encoding: {
          x: { field: "theoretical", type: "quantitative", title: "Standard normal quantile (z)" },
          y: { field: "sample", type: "quantitative", title: NORMALIZED_AXIS },
          ...statusEncoding(d, false),
          tooltip: tooltip(d, [
            { field: "visit", title: "Visit", type: "nominal" },
            { field: "theoretical", title: "Normal quantile" },
            { field: "sample", title: NORMALIZED },
          ]),
        },
      },
    ],
  });
}

export const repeatedQq = defineFigure<RepeatedQqData>({
  key: "repeated_qq",
  checks: ["repeated_normality"],
  data(source, opts) {
    const r = repeatedResult(source, "repeated_qq");
    const obs = r.observations;
    const values = obs.normalizedResidual;
    const flagged = flaggedSubjects(source, r);
    const order = obs.row.map((_, i) => i).filter((i) => Number.isFinite(values[i]));
    order.sort((a, b) => values[a] - values[b] || obs.row[a] - obs.row[b]);
    const sorted = order.map((i) => values[i]);
    const positions = ppoints(order.length);
    // reference line through the sample's and the normal's first and third quartiles (type 7 quantiles)
    const q1 = quantileSorted(sorted, 0.25) ?? NaN;
    const q3 = quantileSorted(sorted, 0.75) ?? NaN;
    const z1 = normalQuantile(0.25);
    const z3 = normalQuantile(0.75);
    const slope = (q3 - q1) / (z3 - z1);
    const intercept = q1 - slope * z1;
    const thinned =
      r.n >= DENSE_FROM
        ? qqKept(
            order.length,
            QQ_TAIL,
            QQ_MIDDLE,
            new Set(order.flatMap((i, k) => (flagged.has(obs.id[i]) ? [k] : []))),
          )
        : null;
    const kept = thinned ? thinned.kept : order.map((_, k) => k);
    const shape = readQqShape(sorted);
    const normality = checkOf(source, "repeated_normality");
    return {
      figure: "repeated_qq",
      ...repeatedBase(r, opts),
      reading: shape.reading,
      summary: shape.summary,
      line: { slope, intercept },
      normalityTest: normality ? { statistic: normality.statistic } : null,
      rows: kept.map((k) => ({
        ...recordRef(r, order[k], opts.withSubjectIds),
        visit: obs.visit[order[k]],
        theoretical: round(normalQuantile(positions[k])),
        sample: round(sorted[k]),
        status: flagged.has(obs.id[order[k]]) ? BEYOND : WITHIN,
      })),
      ...(thinned
        ? {
            dense: { total: order.length, beyond: flagged.size, drawn: kept.length },
            thinning: { tail: QQ_TAIL, step: thinned.step },
          }
        : {}),
    };
  },
  spec: repeatedQqSpec,
  words: {
    caption: "Normal quantile plot of the normalized residuals",
    shows:
      "the sorted normalized residuals of every record against standard normal quantiles (R's ppoints positions), with a reference line through the quartiles",
    healthy: "points close to the line, without an S-shape or bent tails",
  },
  marked: (d) => recordsMarked(d.rows),
});
