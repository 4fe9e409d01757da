/**
 * The look of a signed influence measure by subject (DFBETAS, DFFITS): each subject a point in data
 * order between the plan's ± bounds (dashed), the band between them lightly shaded, subjects beyond
 * a bound as open triangles and the most extreme of them numbered and named in a list beside the plot.
 */
import type { TopLevelSpec } from "vega-lite";
import {
  rankedList,
  rankMarks,
  asSpec,
  dataOf,
  denseLine,
  frame,
  NO_ARIA,
  PALETTE,
  pointMark,
  SCHEMA,
  statusEncoding,
  title,
  tooltip,
  zeroRule,
  type Json,
} from "./look";
import {
  BEYOND,
  WITHIN,
  type FigureBase,
  type PointStatus,
  type SpecOptions,
  type SubjectRef,
  type Threshold,
} from "./types";
import type { ModelResult } from "~/engine";
import { drawnIndices, denseSelection, LABELLED, labelOf, topBy, who, type FigureOptions } from "./source";
import { round } from "./summaries";

export interface SignedRow extends SubjectRef {
  /** Position of the subject in data order, 1..n. */
  order: number;
  value: number;
  /** The coefficient the value is on (DFBETAS of a treatment with several arms). */
  series: string;
  status: PointStatus;
  label: string | null;
  labelRank: number | null;
}

export interface SignedBySubject extends FigureBase {
  /** The measure's name, e.g. "DFBETAS". */
  measure: string;
  /** The bound ± as the plan states it; null when the check was not computed. */
  threshold: Threshold | null;
  /** The coefficients plotted (one series each). */
  series: string[];
  rows: SignedRow[];
}

/** Rows of a signed measure per subject and series; subjects beyond ±bound are BEYOND, the LABELLED most extreme named. */
export function signedRows(
  r: ModelResult,
  values: { series: string; values: readonly number[] }[],
  threshold: Threshold | null,
  opts: FigureOptions,
): SignedRow[] {
  const obs = r.observations;
  const worst = obs.row.map((_, i) =>
    Math.max(...values.map((s) => Math.abs(s.values[i])).filter(Number.isFinite), 0),
  );
  const beyond = (i: number) => threshold !== null && worst[i] > threshold.value;
  const top = topBy(worst, LABELLED, beyond);
  const dense = denseSelection(r, new Set(obs.row.filter((_, i) => beyond(i))));
  return drawnIndices(r.n, dense).flatMap((i) =>
    values.map((s) => {
      const extreme = top.has(i) && Math.abs(s.values[i]) === worst[i];
      return {
        ...who(r, i, opts.withSubjectIds),
        order: i + 1,
        value: round(s.values[i]),
        series: s.series,
        status: threshold !== null && Math.abs(s.values[i]) > threshold.value ? BEYOND : WITHIN,
        label: extreme ? labelOf(r, i, opts.withSubjectIds, top) : null,
        labelRank: extreme ? (top.get(i) ?? null) : null,
      };
    }),
  );
}

/**
 * The bound in words the figure fonts can draw: the shipped Noto Sans faces have no radical sign,
 * so "2/√n = 0.0974" is written "0.0974 (2 over the square root of n)".
 */
function boundWords(t: Threshold): string {
  const formula = t.label.replace(/\s*=.*$/, "");
  const words = formula
    .replace(/^(\S+?)·√\(([^)]*)\)$/, "$1 times the square root of $2")
    .replace(/^(\S+?)\/√(\w+)$/, "$1 over the square root of $2");
  // the bound as the check prints it (4 significant digits), not the full double
  const value = Number(t.value.toPrecision(4));
  return words.includes("√") ? String(value) : `${value} (${words})`;
}

export function signedBySubjectSpec(
  d: SignedBySubject,
  question: string,
  healthy: string,
  extra: string[],
  opts: SpecOptions = {},
): TopLevelSpec {
  const width = opts.width ?? 560;
  const values = d.rows.map((r) => Math.abs(r.value)).filter(Number.isFinite);
  const top = Math.max(d.threshold?.value ?? 0, ...values) * 1.2 || 1;
  const x = {
    field: "order",
    type: "quantitative",
    title: "Subject, in data order (position 1 to n)",
    scale: { domain: [0, d.n + 1], nice: false },
  };
  const y = {
    field: "value",
    type: "quantitative",
    title: `${d.measure} (no unit)`,
    scale: { domain: [-top, top], nice: false },
  };
  const band: Json[] = d.threshold
    ? [
        {
          data: { values: [{ lo: -d.threshold.value, hi: d.threshold.value }] },
          mark: { type: "rect", color: PALETTE.within, opacity: 0.07, ...NO_ARIA },
          encoding: { y: { field: "lo", type: "quantitative", scale: y.scale }, y2: { field: "hi" } },
        },
        ...[d.threshold.value, -d.threshold.value].map((v) => ({
          data: { values: [{}] },
          mark: { type: "rule", color: PALETTE.finding, strokeDash: [6, 3], strokeWidth: 1.2 },
          encoding: { y: { datum: v } },
        })),
      ]
    : [];
  const several = d.series.length > 1;
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      question,
      healthy,
      [
        d.threshold
          ? `Dashed lines: the plan's bound ±${boundWords(d.threshold)}; shaded between them. Numbered: the most extreme subjects beyond it, listed beside the plot.`
          : "The check was not computed, so no bound is drawn.",
        ...(several ? [`One point per subject and coefficient: ${d.series.join(", ")}.`] : []),
        ...extra,
        ...denseLine(d, "only the subjects beyond a bound are drawn"),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...band,
      zeroRule("y"),
      {
        mark: pointMark(),
        encoding: {
          x,
          y,
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "order", title: "Position in data order", format: "d" },
            ...(several ? [{ field: "series", title: "Coefficient", type: "nominal" as const }] : []),
            { field: "value", title: d.measure },
          ]),
        },
      },
      ...rankMarks(x, y, d.n),
      rankedList(
        ["Most extreme", "beyond the bound:"],
        d.rows
          .filter((r) => r.labelRank != null)
          .sort((a, b) => (a.labelRank ?? 0) - (b.labelRank ?? 0))
          .map((r) => (d.withSubjectIds ? `${r.label} (${r.value.toFixed(3)})` : r.value.toFixed(3))),
        "No subject beyond the bound.",
      ),
    ],
  });
}
