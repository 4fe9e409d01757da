/**
 * Calibration of a binomial model by group of predicted risk: does the observed proportion of
 * events match the predicted probability in every group (Hosmer and Lemeshow 1980 groups)?
 */
import type { TopLevelSpec } from "vega-lite";
import { asSpec, dataOf, frame, NO_ARIA, PALETTE, pText, SCHEMA, title } from "./shared/look";
import { defineFigure } from "./shared/module";
import { base, binomialResult, eventOf, FigureUnavailableError, modelResult } from "./shared/source";
import { round } from "./shared/summaries";
import type { FigureBase, SpecOptions } from "./shared/types";

/** One Hosmer–Lemeshow group: a tenth of the subjects by predicted probability. */
export interface CalibrationRow {
  /** 1-based, in order of predicted probability. */
  group: number;
  n: number;
  meanPredicted: number;
  /** Events observed and expected (sum of predicted probabilities) in the group. */
  observed: number;
  expected: number;
  /** observed / n. */
  observedProportion: number;
}
export interface CalibrationData extends FigureBase {
  figure: "calibration";
  event: string;
  rows: CalibrationRow[];
  /** The Hosmer–Lemeshow statistic on g − 2 df, as the rerun computed it. */
  test: { statistic: number | null; df: number | null; p: number | null };
  /** The engine's word of caution about the test. */
  caution: string;
}

/** The Hosmer–Lemeshow test in words. */
function hlText(d: CalibrationData): string {
  const t = d.test;
  return t.statistic !== null && Number.isFinite(t.statistic) && t.df !== null && t.p !== null
    ? `Hosmer–Lemeshow statistic ${t.statistic.toFixed(2)} on ${t.df} degrees of freedom, p ${pText(t.p)}.`
    : "Hosmer–Lemeshow statistic not computed.";
}

/**
 * Calibration plot: the observed proportion of events in each Hosmer–Lemeshow group (Hosmer and
 * Lemeshow 1980) against the group's mean predicted probability, with the line observed =
 * predicted; point area is proportional to the group's size.
 */
export function calibrationSpec(d: CalibrationData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const values = d.rows.flatMap((r) => [r.meanPredicted, r.observedProportion]).filter(Number.isFinite);
  const lo = Math.max(0, Math.floor(((values.length ? Math.min(...values) : 0) - 0.02) * 20) / 20);
  const hi = Math.min(1, Math.ceil(((values.length ? Math.max(...values) : 1) + 0.02) * 20) / 20);
  const scale = { domain: [lo, hi], nice: false, zero: false };
  // the group sizes there are, in words (equal groups differ by one subject at most)
  const sizes = [...new Set(d.rows.map((r) => r.n))].sort((a, b) => a - b);
  const sizeWords = sizes.length <= 2 ? sizes.join(" or ") : `${sizes[0]} to ${sizes[sizes.length - 1]}`;
  const x = {
    field: "meanPredicted",
    type: "quantitative",
    title: `Mean predicted probability of ${d.event} in the group (probability, 0 to 1)`,
    scale,
    axis: { tickCount: 6 },
  };
  // a short rotated title: servers without a canvas estimate text widths generously, and a title
  // longer than the plot's height would push the plot away from its subtitle
  const y = {
    field: "observedProportion",
    type: "quantitative",
    title: "Observed proportion (0 to 1)",
    scale,
  };
  const test = hlText(d);
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "Does predicted risk match observed risk in every group?",
      "every point on the brass line observed = predicted, with no bend at either end.",
      // short, and the sizes in words instead of a legend: the results page's frame is of fixed height
      [
        `${test} ${d.caution}`,
        `Points: the ${d.rows.length} groups of the test, ${sizeWords} subjects each, area by size.`,
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        data: {
          values: [
            { meanPredicted: lo, observedProportion: lo },
            { meanPredicted: hi, observedProportion: hi },
          ],
        },
        mark: { type: "line", color: PALETTE.accent, strokeWidth: 1.6, ...NO_ARIA },
        encoding: { x, y },
      },
      {
        mark: { type: "point", filled: false, color: PALETTE.ink, strokeWidth: 1.4, ...NO_ARIA },
        encoding: {
          x,
          y,
          size: {
            field: "n",
            type: "quantitative",
            title: "Subjects in the group",
            scale: { zero: true, range: [0, 320] },
            legend: null,
          },
          tooltip: [
            { field: "group", type: "quantitative", title: "Group", format: "d" },
            { field: "n", type: "quantitative", title: "Subjects", format: "d" },
            {
              field: "meanPredicted",
              type: "quantitative",
              title: "Mean predicted probability",
              format: ".4~g",
            },
            {
              field: "observedProportion",
              type: "quantitative",
              title: "Observed proportion",
              format: ".4~g",
            },
            { field: "observed", type: "quantitative", title: "Events observed", format: "d" },
            { field: "expected", type: "quantitative", title: "Events expected", format: ".4~g" },
          ],
        },
      },
    ],
  });
}

export const calibration = defineFigure<CalibrationData>({
  key: "calibration",
  checks: [],
  data(source, opts) {
    const r = modelResult(source, "calibration");
    const g = binomialResult(r, "the calibration plot");
    const c = g.checks.calibration;
    if (!c?.groups.length)
      throw new FigureUnavailableError(
        "the rerun stored no calibration groups; rerun it with the current engine",
      );
    const rows: CalibrationRow[] = c.groups.map((group, k) => ({
      group: k + 1,
      n: group.n,
      meanPredicted: round(group.meanPredicted),
      observed: group.observed,
      expected: round(group.expected),
      observedProportion: round(group.observed / group.n),
    }));
    return {
      figure: "calibration",
      ...base(g, opts),
      withSubjectIds: false,
      event: eventOf(g),
      rows,
      test: { statistic: c.statistic, df: c.df, p: c.p },
      caution: c.caution,
    };
  },
  spec: calibrationSpec,
  words: {
    caption: "Calibration by group of predicted risk",
    shows:
      "the observed proportion of events in each tenth of the subjects by predicted probability against the group's mean predicted probability, with the line observed = predicted",
    healthy: "every point close to the line",
  },
  marked(d) {
    return `${d.rows.length} groups; point area shows each group's size. ${hlText(d)} ${d.caution}`;
  },
});
