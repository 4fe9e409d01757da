/**
 * Residual figures of a Cox rerun: scaled Schoenfeld residuals against time per coefficient
 * (a flat smoother at the fitted log hazard ratio when the hazards are proportional),
 * martingale residuals against a continuous covariate (a flat smoother when the log hazard is
 * linear in it), and each subject's DFBETAS on the treatment log hazard ratio.
 */
import type { TopLevelSpec } from "vega-lite";
import {
  asSpec,
  dataOf,
  frame,
  loessLayer,
  NO_ARIA,
  ONE,
  PALETTE,
  pointMark,
  thresholdRule,
  title,
  tooltip,
  zeroRule,
} from "../shared/look";
import type { SpecOptions } from "../shared/types";
import type { CoxInfluenceData, MartingaleCovariateData, SchoenfeldData } from "./cox-figure-types";

const pText = (p: number | null) =>
  p === null || !Number.isFinite(p) ? "p not computed" : p < 0.0001 ? "p < 0.0001" : `p = ${p.toFixed(4)}`;

/** Open circles within plan, open triangles in the finding colour beyond a threshold. */
function statusMarks(): Record<string, unknown> {
  const domain = ["within the thresholds", "beyond a planned threshold"];
  const legend = { title: "Subjects" };
  return {
    shape: { field: "status", type: "nominal", scale: { domain, range: ["circle", "triangle-up"] }, legend },
    color: {
      field: "status",
      type: "nominal",
      scale: { domain, range: [PALETTE.pending, PALETTE.finding] },
      legend,
    },
  };
}

export function schoenfeldSpec(d: SchoenfeldData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const test = d.test
    ? `Test of proportional hazards for ${d.test.term}: χ² = ${d.test.statistic.toFixed(2)} on ${d.test.df} df, ${pText(d.test.p)} (time scale: ${d.transform}).`
    : "";
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      `Does the effect of ${d.term} change over time?`,
      "the brass smoother flat along the dashed line of the fitted log hazard ratio; a trend means the effect grows or fades with time.",
      [
        `Scaled Schoenfeld residuals, one point per event. Dashed: the fitted log hazard ratio ${d.coefficient.toFixed(3)}. ${test}`,
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        mark: pointMark(),
        encoding: {
          x: { field: "time", type: "quantitative", title: `Event time (${d.responseUnit})` },
          y: { field: "scaled", type: "quantitative", title: "Scaled Schoenfeld residual (log HR scale)" },
          ...statusMarks(),
          tooltip: tooltip(d, [
            { field: "time", title: "Event time" },
            { field: "scaled", title: "Scaled residual" },
          ]),
        },
      },
      {
        data: ONE,
        mark: { type: "rule", color: PALETTE.ink, strokeDash: [6, 3], strokeWidth: 1.2 },
        encoding: { y: { datum: d.coefficient } },
      },
      loessLayer(d.smooth),
    ],
  });
}

export function martingaleCovariateSpec(d: MartingaleCovariateData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const test =
    d.test && d.test.statistic !== null
      ? `Likelihood-ratio test of an added squared term: χ² = ${d.test.statistic.toFixed(2)} on 1 df, ${pText(d.test.p)}.`
      : "";
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      `Is the log hazard linear in ${d.term}?`,
      "the brass smoother flat around zero across the covariate's range; a bend shows where a straight-line effect misfits.",
      [
        `Martingale residuals against ${d.term}, one point per subject (events near +1, censored below 0). Dashed: zero. ${test}`,
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        mark: pointMark(),
        encoding: {
          x: { field: "x", type: "quantitative", title: `${d.term} (${d.termUnit})`, scale: { zero: false } },
          y: {
            field: "martingale",
            type: "quantitative",
            title: "Martingale residual (observed − expected events)",
          },
          ...statusMarks(),
          tooltip: tooltip(d, [
            { field: "x", title: d.term },
            { field: "martingale", title: "Martingale residual" },
          ]),
        },
      },
      zeroRule("y"),
      loessLayer(d.smooth),
    ],
  });
}

export function coxInfluenceSpec(d: CoxInfluenceData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const x = {
    field: "order",
    type: "quantitative",
    title: "Subject, in data order (position 1 to n)",
    scale: { domain: [0, d.n + 1], nice: false },
  };
  const y = {
    field: "dfbetas",
    type: "quantitative",
    title: "DFBETAS on the treatment log hazard ratio (SE units)",
  };
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "Does any one subject move the treatment effect?",
      "every bar inside the dashed lines; no single subject shifts the log hazard ratio by much of its standard error.",
      [
        `DFBETAS by subject. ${d.threshold ? `Dashed lines: the plan's threshold ±${d.threshold.label}.` : "The plan sets no DFBETAS threshold."}`,
        `Coefficient: ${d.coefficients.join(", ")}; the larger in size where there are several.`,
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        mark: { type: "rule", color: PALETTE.rule, strokeWidth: 1, ...NO_ARIA },
        encoding: { x, y, y2: { datum: 0 } },
      },
      {
        mark: pointMark(),
        encoding: {
          x,
          y,
          ...statusMarks(),
          tooltip: tooltip(d, [
            { field: "order", title: "Position in data order", format: "d" },
            { field: "dfbetas", title: "DFBETAS" },
          ]),
        },
      },
      ...(d.threshold
        ? [
            ...thresholdRule("y", d.threshold, "threshold"),
            ...thresholdRule("y", { value: -d.threshold.value, label: `−(${d.threshold.label})` }, ""),
          ]
        : []),
      zeroRule("y"),
      // labels of the three most extreme subjects, staggered so that neighbours do not overlap
      ...[1, 2, 3].map((rank) => ({
        transform: [{ filter: `datum.labelRank == ${rank}` }],
        mark: {
          type: "text",
          align: "left",
          dx: 6,
          dy: -2 + (rank - 1) * 11 * (rank % 2 === 0 ? -1 : 1),
          fontSize: 10,
          color: PALETTE.finding,
        },
        encoding: { x, y, text: { field: "label", type: "nominal" } },
      })),
    ],
  });
}
