/**
 * Kaplan–Meier curves by arm with the numbers at risk beneath them, and log(−log S) against
 * log time by arm (parallel lines when the hazards are proportional). specs.ts imports this
 * module for its dispatch, so nothing of specs.ts is read when this module loads.
 */
import type { TopLevelSpec } from "vega-lite";
import { asSpec, dataOf, frame, NO_ARIA, PALETTE, title } from "../shared/look";
import type { SpecOptions } from "../shared/types";
import type { KaplanMeierData, LogMinusLogData } from "./cox-figure-types";

/** Arm colours: ink for the first (usually the reference), brass, then the status-free greys. */
const armColours = () => [PALETTE.ink, PALETTE.accent, "#5b6478", "#8a8f9c", "#b39b6b"];
const ARM_DASHES = [
  [1, 0],
  [6, 3],
  [2, 2],
  [8, 2, 2, 2],
  [4, 4],
];

function armEncoding(arms: readonly string[], treatment: string | null): Record<string, unknown> {
  const legend = { title: treatment ?? "All subjects" };
  return {
    color: {
      field: "arm",
      type: "nominal",
      scale: { domain: arms, range: armColours().slice(0, arms.length) },
      legend,
    },
    strokeDash: {
      field: "arm",
      type: "nominal",
      scale: { domain: arms, range: ARM_DASHES.slice(0, arms.length) },
      legend,
    },
  };
}

const pText = (p: number) => (p < 0.0001 ? "p < 0.0001" : `p = ${p.toFixed(4)}`);

export function kaplanMeierSpec(d: KaplanMeierData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  // the numbers at risk sit in bands below zero, one band per arm
  const band = 0.09;
  const bottom = -band * (d.arms.length + 0.6);
  const atRiskRows = d.atRisk.map((a) => ({ ...a, y: -band * (d.arms.indexOf(a.arm) + 1) }));
  const armLabels = d.arms.map((arm, k) => ({ arm, y: -band * (k + 1) }));
  const x = {
    field: "time",
    type: "quantitative",
    title: `Time (${d.responseUnit})`,
    scale: { nice: false, zero: true },
  };
  const y = {
    field: "estimate",
    type: "quantitative",
    title: "Proportion without the event (share of the arm)",
    scale: { domain: [bottom, 1.02], nice: false },
    axis: { values: [0, 0.25, 0.5, 0.75, 1], format: ".0%" },
  };
  const test = d.logRank
    ? `${d.logRank.stratified ? "Stratified log-rank" : "Log-rank"} χ² = ${d.logRank.statistic.toFixed(2)} on ${d.logRank.df} df, ${pText(d.logRank.p)}.`
    : "No arms to compare.";
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "How long do subjects stay event-free in each arm?",
      "curves that separate early and stay apart without crossing; the shaded 95% bands narrow where many remain at risk.",
      [`Kaplan–Meier curves by arm. Numbers below the axis: subjects still at risk at each time. ${test}`],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        mark: { type: "area", interpolate: "step-after", opacity: 0.12, ...NO_ARIA },
        encoding: {
          x,
          y: { field: "lower", type: "quantitative", scale: y.scale },
          y2: { field: "upper" },
          color: armEncoding(d.arms, d.treatment).color,
        },
      },
      {
        mark: { type: "line", interpolate: "step-after", strokeWidth: 1.8 },
        encoding: {
          x,
          y,
          ...armEncoding(d.arms, d.treatment),
          tooltip: [
            { field: "arm", type: "nominal", title: "Arm" },
            { field: "time", type: "quantitative", title: "From time", format: ".4~g" },
            { field: "estimate", type: "quantitative", title: "Event-free proportion", format: ".3f" },
            { field: "lower", type: "quantitative", title: "95% lower", format: ".3f" },
            { field: "upper", type: "quantitative", title: "95% upper", format: ".3f" },
            { field: "atRisk", type: "quantitative", title: "At risk", format: "d" },
          ],
        },
      },
      { data: { values: [{}] }, mark: { type: "rule", color: PALETTE.rule }, encoding: { y: { datum: 0 } } },
      {
        data: { values: atRiskRows },
        mark: { type: "text", fontSize: 9, baseline: "middle" },
        encoding: {
          x: { field: "time", type: "quantitative" },
          y: { field: "y", type: "quantitative" },
          text: { field: "atRisk", type: "quantitative", format: "d" },
          color: armEncoding(d.arms, d.treatment).color,
        },
      },
      {
        data: { values: armLabels },
        mark: {
          type: "text",
          fontSize: 9,
          align: "right",
          baseline: "middle",
          x: { expr: "width - 2" },
          fontWeight: 600,
        },
        encoding: {
          y: { field: "y", type: "quantitative" },
          text: { field: "arm", type: "nominal" },
          color: armEncoding(d.arms, d.treatment).color,
        },
      },
    ],
  });
}

export function logMinusLogSpec(d: LogMinusLogData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "Do the arms' hazards keep a constant ratio?",
      "roughly parallel lines, a constant vertical gap between arms; lines that converge or cross suggest the hazards are not proportional.",
      [
        "log(−log S) against log time. Each step of each arm's Kaplan–Meier curve where 0 < S < 1 and time > 0.",
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        mark: {
          type: "line",
          interpolate: "step-after",
          strokeWidth: 1.6,
          point: { size: 14, filled: true },
        },
        encoding: {
          x: {
            field: "logTime",
            type: "quantitative",
            title: `log of time (time in ${d.responseUnit})`,
            scale: { zero: false },
          },
          y: {
            field: "logMinusLog",
            type: "quantitative",
            title: "log(−log of the event-free proportion)",
            scale: { zero: false },
          },
          ...armEncoding(d.arms, d.treatment),
          tooltip: [
            { field: "arm", type: "nominal", title: "Arm" },
            { field: "time", type: "quantitative", title: "Time", format: ".4~g" },
            { field: "logMinusLog", type: "quantitative", title: "log(−log S)", format: ".3f" },
          ],
        },
      },
    ],
  });
}
