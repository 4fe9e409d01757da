/**
 * Adjusted means over the visits by arm with their 95% intervals, visits in order, and under the
 * plot the subjects each arm still has at each visit: how do the arms separate over time, and how
 * many subjects stand behind each mean? The primary visit is marked. Arms are told apart by line
 * pattern and point shape as well as colour. Supports the check of the subjects contributing at
 * the primary visit. The means and intervals are the rerun's own (no subject is drawn).
 */
import { ticks } from "d3-array";
import type { TopLevelSpec } from "vega-lite";
import { asSpec, dataOf, frame, NO_ARIA, ONE, PALETTE, SCHEMA, title } from "../shared/look";
import { defineFigure } from "../shared/module";
import { checkOf, FigureUnavailableError } from "../shared/source";
import { round } from "../shared/summaries";
import type { FigureBase, SpecOptions } from "../shared/types";
import { repeatedBase, repeatedResult } from "./repeated-source";

export interface VisitMeanPoint {
  arm: string;
  visit: string;
  /** The visit's position on the x axis (0-based), moved a little per arm so intervals do not overlap. */
  x: number;
  estimate: number;
  se: number;
  df: number;
  lower: number;
  upper: number;
  /** Subjects of the arm with a record at the visit. */
  subjects: number;
}

export interface MeansOverVisitsData extends FigureBase {
  figure: "repeated_means";
  treatment: string;
  arms: string[];
  visits: string[];
  primaryVisit: string;
  rows: VisitMeanPoint[];
  /** The subjects per arm and visit written below the plot, at their band's height. */
  counts: { arm: string; visit: string; x: number; y: number; subjects: number }[];
  /** The y axis: its domain (the counts' bands included) and tick values (the means' range only). */
  yDomain: [number, number];
  /** Where the means' range ends and the counts' bands begin (a rule is drawn there). */
  countsFrom: number;
  yTicks: number[];
  /** The primary-visit check in words, when it was computed. */
  primaryCheck: string | null;
}

/** Arm colours (ink, brass, then greys free of status meaning), line patterns and point shapes. */
const ARM_COLOURS = [PALETTE.ink, PALETTE.accent, "#5b6478", "#8a8f9c", "#b39b6b", "#6d5a3a"];
const ARM_DASHES = [
  [1, 0],
  [6, 3],
  [2, 2],
  [8, 2, 2, 2],
  [4, 4],
  [10, 4],
];
const ARM_SHAPES = ["circle", "square", "diamond", "triangle-down", "cross", "triangle-right"];

/** How far apart the arms' points sit at one visit, in visit units. */
const DODGE = 0.09;

const pick = <T>(list: readonly T[], n: number): T[] =>
  Array.from({ length: n }, (_, k) => list[k % list.length]);

export function meansOverVisitsSpec(d: MeansOverVisitsData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const names = JSON.stringify(d.visits);
  const legend = { title: d.treatment };
  const arm = (channel: "color" | "strokeDash" | "shape", range: readonly unknown[]) => ({
    [channel]: {
      field: "arm",
      type: "nominal",
      scale: { domain: d.arms, range: pick(range, d.arms.length) },
      legend,
    },
  });
  const x = {
    field: "x",
    type: "quantitative",
    title: "Visit (in visit order)",
    scale: { domain: [-0.5, d.visits.length - 0.5], nice: false, zero: false },
    axis: {
      values: d.visits.map((_, k) => k),
      labelExpr: `${names}[round(datum.value)]`,
      labelOverlap: false,
      grid: false,
    },
  };
  const y = {
    field: "estimate",
    type: "quantitative",
    title: `Adjusted mean of ${d.response} (${d.responseUnit})`,
    scale: { domain: d.yDomain, nice: false, zero: false },
    axis: { values: d.yTicks },
  };
  const primaryAt = d.visits.indexOf(d.primaryVisit);
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "How far apart are the arms at each visit, and on how many subjects?",
      "intervals that narrow little over time and numbers below that fall only slowly; the arms' separation at the primary visit read with the subjects still contributing there.",
      [
        `Adjusted means with 95% confidence intervals at each visit; numbers below: subjects of each arm with a record at the visit. Dashed: the primary visit (${d.primaryVisit}).`,
        ...(d.primaryCheck ? [`Primary-visit check: ${d.primaryCheck}.`] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(primaryAt >= 0
        ? [
            {
              data: ONE,
              mark: { type: "rule", color: PALETTE.inkSoft, strokeDash: [4, 3], strokeWidth: 1, ...NO_ARIA },
              // over the means only, not through the counts below them
              encoding: {
                x: { datum: primaryAt },
                y: { datum: d.countsFrom, type: "quantitative" },
                y2: { datum: d.yDomain[1] },
              },
            },
          ]
        : []),
      {
        data: ONE,
        mark: { type: "rule", color: PALETTE.rule, strokeWidth: 1, ...NO_ARIA },
        encoding: { y: { datum: d.countsFrom } },
      },
      {
        mark: { type: "rule", strokeWidth: 1.2 },
        encoding: { x, y: { ...y, field: "lower" }, y2: { field: "upper" }, ...arm("color", ARM_COLOURS) },
      },
      {
        mark: { type: "line", strokeWidth: 1.6 },
        encoding: {
          x,
          y,
          ...arm("color", ARM_COLOURS),
          ...arm("strokeDash", ARM_DASHES),
          order: { field: "x", type: "quantitative" },
        },
      },
      {
        mark: { type: "point", filled: true, size: 36 },
        encoding: {
          x,
          y,
          ...arm("color", ARM_COLOURS),
          ...arm("shape", ARM_SHAPES),
          tooltip: [
            { field: "arm", type: "nominal", title: d.treatment },
            { field: "visit", type: "nominal", title: "Visit" },
            { field: "estimate", type: "quantitative", title: "Adjusted mean", format: ".4~g" },
            { field: "lower", type: "quantitative", title: "95% CI from", format: ".4~g" },
            { field: "upper", type: "quantitative", title: "95% CI to", format: ".4~g" },
            { field: "df", type: "quantitative", title: "Degrees of freedom", format: ".1f" },
            { field: "subjects", type: "quantitative", title: "Subjects with a record", format: "d" },
          ],
        },
      },
      {
        data: { values: d.counts },
        mark: { type: "text", fontSize: 9, baseline: "middle", ...NO_ARIA },
        encoding: {
          x: { field: "x", type: "quantitative" },
          y: { field: "y", type: "quantitative" },
          text: { field: "subjects", type: "quantitative", format: "d" },
          ...arm("color", ARM_COLOURS),
        },
      },
    ],
  });
}

export const meansOverVisits = defineFigure<MeansOverVisitsData>({
  key: "repeated_means",
  checks: ["repeated_primary_visit"],
  data(source, opts) {
    const r = repeatedResult(source, "repeated_means");
    const am = r.adjustedMeans;
    if (!am)
      throw new FigureUnavailableError("the model names no treatment, so there are no adjusted means by arm");
    const visits = [...r.covariance.visits];
    // arms in the treatment's order, the reference first when the plan names one
    const seen = [...new Set(am.means.map((m) => m.level))];
    const reference = r.spec.terms.find((t) => "variable" in t && t.variable === am.treatment);
    const ref = reference && "reference" in reference ? reference.reference : undefined;
    const arms = ref && seen.includes(ref) ? [ref, ...seen.filter((a) => a !== ref)] : seen;
    const dodge = (a: number) => (a - (arms.length - 1) / 2) * DODGE;
    const subjectsAt = (arm: string, visit: string) =>
      r.counts.find((c) => c.level === arm && c.visit === visit)?.subjects ?? 0;
    const rows: VisitMeanPoint[] = am.means
      .map((m) => ({
        arm: m.level,
        visit: m.visit,
        x: round(visits.indexOf(m.visit) + dodge(arms.indexOf(m.level))),
        estimate: round(m.estimate),
        se: round(m.se),
        df: round(m.df),
        lower: round(m.lower),
        upper: round(m.upper),
        subjects: subjectsAt(m.level, m.visit),
      }))
      .sort((a, b) => arms.indexOf(a.arm) - arms.indexOf(b.arm) || a.x - b.x);
    const finite = rows.flatMap((m) => [m.lower, m.upper]).filter(Number.isFinite);
    const lo = finite.length ? Math.min(...finite) : 0;
    const hi = finite.length ? Math.max(...finite) : 1;
    const yTicks = ticks(lo, hi, 5);
    const top = Math.max(hi, yTicks[yTicks.length - 1] ?? hi);
    const bottom = Math.min(lo, yTicks[0] ?? lo);
    // the subject counts sit in bands below the means, one band per arm
    const band = (top - bottom || 1) * 0.08;
    const counts = arms.flatMap((a, k) =>
      visits.map((visit, v) => ({
        arm: a,
        visit,
        x: v,
        y: round(bottom - band * (k + 1)),
        subjects: subjectsAt(a, visit),
      })),
    );
    const primary = checkOf(source, "repeated_primary_visit");
    return {
      figure: "repeated_means",
      ...repeatedBase(r, opts),
      withSubjectIds: false,
      treatment: am.treatment,
      arms,
      visits,
      primaryVisit: r.influence.primaryVisit,
      rows,
      counts,
      yDomain: [round(bottom - band * (arms.length + 0.6)), round(top + band * 0.3)],
      countsFrom: round(bottom - band * 0.4),
      yTicks: yTicks.map(round),
      primaryCheck: primary ? primary.statistic : null,
    };
  },
  spec: meansOverVisitsSpec,
  words: {
    caption: "Adjusted means over the visits by arm, with the subjects contributing at each visit",
    shows:
      "each arm's adjusted mean at every visit with its 95% confidence interval, visits in order, the primary visit marked, and below the plot the number of subjects of each arm with a record at each visit",
    healthy:
      "subject numbers that fall only slowly over the visits in every arm, so the means at the primary visit rest on most of the subjects analysed",
  },
  marked: (d) => {
    const at = d.rows.filter((m) => m.visit === d.primaryVisit);
    return `At the primary visit (${d.primaryVisit}): ${at.map((m) => `${m.arm} ${m.subjects} subjects`).join(", ")}.`;
  },
});
