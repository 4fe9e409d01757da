/**
 * The sensitivity comparison: does the treatment conclusion hold in every analysis? The treatment
 * contrast with its 95% CI per analysis, primary first and filled, pre-specified sensitivity
 * analyses as open squares, analyses the plan did not name as open triangles and labelled "not
 * pre-specified" on the axis; a brass band marks the primary CI. A ratio (a contrast whose label
 * ends "ratio)": hazard, odds, risk or rate ratio) is drawn on a log axis with no effect at 1 and
 * read in its own words; a difference on a linear axis with no effect at 0.
 */
import type { TopLevelSpec } from "vega-lite";
import { asSpec, baseConfig, PALETTE, SCHEMA, title, wrapWords } from "./shared/look";
import type { SpecOptions } from "./shared/types";

/** One analysis in the comparison of the treatment contrast. */
export interface ForestRow {
  label: string;
  estimate: number;
  lower: number;
  upper: number;
  prespecified: boolean;
  primary: boolean;
}

export interface ForestPoint extends ForestRow {
  /** The axis label: the analysis with "primary" or "not pre-specified" in words, broken into lines ("\n") of at most LABEL_CHARS. */
  axisLabel: string;
  kind: "Primary analysis" | "Pre-specified sensitivity" | "Not pre-specified";
  interval: string;
}

/** True for a ratio contrast (compared on the log scale, no effect at 1). */
export function isRatio(contrastLabel: string): boolean {
  return /ratio\)$/.test(contrastLabel);
}

/** The contrast's kind in words: "ratio" or "difference" (a restricted mean's difference, or of adjusted means). */
export function contrastWords(contrastLabel: string): {
  ratio: boolean;
  kind: string;
  noEffect: string;
  heading: "Ratio" | "Difference";
} {
  const ratio = isRatio(contrastLabel);
  return ratio
    ? { ratio, kind: "ratio", noEffect: "1", heading: "Ratio" }
    : {
        ratio,
        kind: /restricted mean/.test(contrastLabel)
          ? "difference in restricted mean"
          : "difference in adjusted means",
        noEffect: "0",
        heading: "Difference",
      };
}

/** Analysis labels wrap at this many characters, so no label is cut short beside the plot. */
const LABEL_CHARS = 34;

/** Shapes the rows (primary first) and writes each one's words. */
export function forestPoints(rows: readonly ForestRow[], digits = 2): ForestPoint[] {
  const ordered = [...rows.filter((r) => r.primary), ...rows.filter((r) => !r.primary)];
  return ordered.map((r) => {
    const kind = r.primary
      ? "Primary analysis"
      : r.prespecified
        ? "Pre-specified sensitivity"
        : "Not pre-specified";
    // the words come first, so a long analysis label is what gets wrapped, never the words
    const axisLabel = r.primary
      ? /^primary\b/i.test(r.label)
        ? r.label
        : `Primary: ${r.label}`
      : r.prespecified
        ? r.label
        : `Not pre-specified: ${r.label}`;
    return {
      ...r,
      kind,
      axisLabel: wrapWords(axisLabel, LABEL_CHARS).join("\n"),
      interval: `${r.estimate.toFixed(digits)} (${r.lower.toFixed(digits)} to ${r.upper.toFixed(digits)})`,
    };
  });
}

export function forestSpec(
  rows: readonly ForestRow[],
  contrastLabel: string,
  opts: SpecOptions & { unit?: string } = {},
): TopLevelSpec {
  const points = forestPoints(rows);
  const width = opts.width ?? 560;
  const primary = points.find((p) => p.primary);
  const words = contrastWords(contrastLabel);
  const lines = Math.max(1, ...points.map((p) => p.axisLabel.split("\n").length));
  const y = {
    field: "axisLabel",
    type: "nominal",
    title: null,
    sort: points.map((p) => p.axisLabel),
    // each label on as many lines as it needs (the server has no canvas to measure text, so widths are estimated generously)
    axis: {
      labelExpr: "split(datum.value, '\\n')",
      labelLimit: 0,
      labelFontSize: 11,
      labelColor: PALETTE.ink,
      labelLineHeight: 13,
    },
  };
  const scale = words.ratio ? { type: "log", nice: false, padding: 12 } : { zero: false, padding: 12 };
  const xTitle = words.ratio
    ? `${contrastLabel}, 95% CI (log scale)`
    : `${contrastLabel}: ${words.kind}${opts.unit ? ` (${opts.unit})` : ""}, 95% CI`;
  const x = (field: string) => ({ field, type: "quantitative", title: xTitle, scale });
  const kinds = ["Primary analysis", "Pre-specified sensitivity", "Not pre-specified"];
  const legend = { title: null, orient: "bottom", direction: "horizontal" };
  const noEffect = words.ratio ? "Dashed: ratio 1, no effect" : "Dashed: no difference";
  const spec = asSpec({
    $schema: SCHEMA,
    width,
    height: Math.max(60, points.length * (14 + 13 * lines)),
    config: baseConfig(opts.forPrint),
    title: title(
      "Does the treatment conclusion hold in every analysis?",
      `every interval close to the primary one and on the same side of ${words.noEffect}, so the conclusion does not hang on one analysis.`,
      [
        `${contrastLabel}: ${words.ratio ? "the ratio" : `the ${words.kind}`} with its 95% CI per analysis.${primary ? " Shaded band: the primary analysis's 95% CI." : ""} ${noEffect}.`,
      ],
      width,
    ),
    datasets: { rows: points },
    data: { name: "rows" },
    layer: [
      ...(primary
        ? [
            {
              data: { values: [{ lower: primary.lower, upper: primary.upper }] },
              mark: { type: "rect", color: PALETTE.accent, opacity: 0.12 },
              encoding: { x: x("lower"), x2: { field: "upper" } },
            },
          ]
        : []),
      {
        data: { values: [{ at: words.ratio ? 1 : 0 }] },
        mark: { type: "rule", color: PALETTE.inkSoft, strokeDash: [4, 3], strokeWidth: 1 },
        encoding: { x: x("at") },
      },
      {
        mark: { type: "rule", strokeWidth: 1.6, color: PALETTE.ink },
        encoding: { y, x: x("lower"), x2: { field: "upper" } },
      },
      {
        mark: { type: "point", filled: false, strokeWidth: 1.6, size: 80 },
        encoding: {
          y,
          x: x("estimate"),
          shape: {
            field: "kind",
            type: "nominal",
            scale: { domain: kinds, range: ["diamond", "square", "triangle-up"] },
            legend,
          },
          color: {
            field: "kind",
            type: "nominal",
            scale: { domain: kinds, range: [PALETTE.ink, PALETTE.within, PALETTE.finding] },
            legend,
          },
          fill: {
            field: "kind",
            type: "nominal",
            scale: { domain: kinds, range: [PALETTE.ink, "transparent", "transparent"] },
            legend,
          },
          tooltip: [
            { field: "label", type: "nominal", title: "Analysis" },
            { field: "kind", type: "nominal", title: "Kind" },
            {
              field: "estimate",
              type: "quantitative",
              title: words.ratio ? "Ratio" : "Estimate",
              format: ".3f",
            },
            { field: "lower", type: "quantitative", title: "95% CI lower", format: ".3f" },
            { field: "upper", type: "quantitative", title: "95% CI upper", format: ".3f" },
          ],
        },
      },
    ],
  });
  return spec;
}

/** Caption words and alt text of a forest figure in the appendix. */
export function forestAlt(
  caption: string,
  contrastLabel: string,
  points: readonly { label: string; estimate: string; interval: string }[],
): string {
  const w = contrastWords(contrastLabel);
  const [first, ...rest] = points;
  return (
    `${caption}: the ${w.ratio ? "ratio" : w.kind} with its 95% confidence interval for each of ${points.length} analyses, primary first, ` +
    `${w.ratio ? "on a log axis with a dashed line at a ratio of 1 (no effect)" : "with a dashed line at no difference"}. ` +
    (first ? `Primary ${first.estimate} (${first.interval}); ` : "") +
    rest.map((f) => `${f.label} ${f.estimate} (${f.interval})`).join("; ") +
    `. Healthy: every interval close to the primary one and on the same side of ${w.noEffect}.`
  );
}
