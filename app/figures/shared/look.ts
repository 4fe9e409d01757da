/**
 * The figures' shared look: palette, Noto Sans, titles that state the healthy picture, hover
 * tables, status shapes, reference rules and the layers several figures draw (density cells, box
 * summaries, the smoother). Pure: no React, no DOM. Each figure module (app/figures/<name>.ts)
 * builds its Vega-Lite specification from these.
 *
 * Points beyond a planned threshold are open triangles in the finding colour, the others small
 * open circles, so status is shape and word as well as colour.
 */
import type { TopLevelSpec } from "vega-lite";
import {
  BEYOND,
  CROWDED_FROM,
  WITHIN,
  type BoxSummary,
  type DensityCell,
  type FigureBase,
  type SmoothPoint,
  type SpecOptions,
  type Threshold,
} from "./types";

/** The palette of DESIGN.md. */
export const PALETTE = {
  ink: "#1d2433",
  inkSoft: "#4a5266",
  paper: "#f7f5ef",
  sheet: "#fffdf8",
  rule: "#d9d4c7",
  accent: "#9a6b1f",
  within: "#2e6f5e",
  finding: "#b4442a",
  pending: "#5b6478",
} as const;

export type Json = Record<string, unknown>;

/**
 * The builders assemble plain objects; Vega-Lite's own compile() checks every one of them in
 * tests/unit/figure-specs.test.ts, which is stricter than its TypeScript types can be here.
 */
export function asSpec(spec: Json): TopLevelSpec {
  return deferTooltips(spec) as unknown as TopLevelSpec;
}

/** One line of a hover table: the datum's field, its title, and a d3-format pattern for numbers. */
export interface TooltipField {
  field: string;
  title: string;
  type?: string;
  format?: string;
}

/** Where a figure keeps its hover tables, by key: usermeta.tooltips (read by draw-chart.ts). */
export interface FigureUsermeta {
  tooltips: Record<string, TooltipField[]>;
}

/**
 * Hover tables are built when the pointer reaches a mark, not for every mark while drawing: each
 * layer's tooltip list moves to usermeta.tooltips under a key, and the layer's tooltip becomes
 * that key (a constant). Measured with `npm run bench:figures`, Vega's CSP-safe interpreter spent
 * about a tenth of a results page's drawing time formatting tooltips nobody hovered. The
 * browser's tooltip handler (draw-chart.ts) turns the key and the datum into the table; servers
 * drawing to SVG or PNG ignore tooltips either way.
 */
function deferTooltips(spec: Json): Json {
  const tooltips: Record<string, TooltipField[]> = {};
  const layers = (spec.layer as Json[] | undefined) ?? [];
  const layer = layers.map((l, k) => {
    const encoding = l.encoding as Json | undefined;
    if (!encoding || !Array.isArray(encoding.tooltip)) return l;
    const key = `layer${k}`;
    tooltips[key] = encoding.tooltip as TooltipField[];
    return { ...l, encoding: { ...encoding, tooltip: { value: key } } };
  });
  return spec.layer ? { ...spec, layer, usermeta: { tooltips } satisfies FigureUsermeta } : spec;
}

/** Shared look: Noto Sans, ink text, rule-coloured axes, brass accents. */
export function baseConfig(forPrint = false): Json {
  return {
    font: "Noto Sans",
    background: PALETTE.sheet,
    ...(forPrint ? { aria: false } : {}),
    view: { stroke: PALETTE.rule },
    title: {
      anchor: "start",
      color: PALETTE.ink,
      fontSize: 13,
      fontWeight: 600,
      subtitleColor: PALETTE.inkSoft,
      subtitleFontSize: 11,
      subtitlePadding: 3,
      offset: 8,
    },
    axis: {
      labelColor: PALETTE.inkSoft,
      titleColor: PALETTE.ink,
      titleFontWeight: 500,
      titleFontSize: 11,
      labelFontSize: 10,
      domainColor: PALETTE.rule,
      tickColor: PALETTE.rule,
      gridColor: "#ece8dd",
    },
    legend: {
      labelColor: PALETTE.ink,
      titleColor: PALETTE.ink,
      labelFontSize: 10,
      titleFontSize: 10,
      labelLimit: 320,
      orient: "top",
      direction: "horizontal",
    },
    point: { strokeWidth: 1 },
  };
}

/** Breaks a sentence into lines of at most `max` characters (titles do not wrap by themselves). */
export function wrapWords(text: string, max: number): string[] {
  const lines: string[] = [];
  let line = "";
  for (const word of text.split(/\s+/).filter(Boolean)) {
    if (line && line.length + 1 + word.length > max) {
      lines.push(line);
      line = word;
    } else line = line ? `${line} ${word}` : word;
  }
  if (line) lines.push(line);
  return lines;
}

/**
 * Wraps a spec's subtitle again for a frame `width` pixels wide (the browser knows the width).
 * Works on the Vega-Lite spec and on its compiled Vega form, which keep the title alike.
 */
export function rewrapTitle<S extends object>(spec: S, width: number): S {
  const t = (spec as unknown as { title?: { text: string; subtitle?: string[] } }).title;
  if (!t?.subtitle || !(width > 0)) return spec;
  const chars = Math.max(40, Math.floor(width / 6.2));
  // the server's lines are paragraphs split at spaces: rejoin each sentence group, then wrap
  const paragraphs: string[] = [];
  for (const line of t.subtitle) {
    const last = paragraphs.length - 1;
    if (last >= 0 && !/[.:;]$/.test(paragraphs[last])) paragraphs[last] = `${paragraphs[last]} ${line}`;
    else paragraphs.push(line);
  }
  return { ...spec, title: { ...t, subtitle: paragraphs.flatMap((p) => wrapWords(p, chars)) } };
}

export function title(name: string, healthy: string, extra: string[], width: number | "container"): Json {
  const chars = width === "container" ? 90 : Math.max(40, Math.floor(width / 6.2));
  return {
    text: name,
    subtitle: [...wrapWords(`Healthy: ${healthy}`, chars), ...extra.flatMap((e) => wrapWords(e, chars))],
  };
}

export function frame(d: { n: number }, opts: SpecOptions): Json {
  return { width: opts.width ?? 560, height: opts.height ?? 230, config: baseConfig(opts.forPrint) };
}

export function dataOf(rows: readonly object[], opts: SpecOptions): Json {
  return opts.inlineRows === false
    ? { data: { name: "rows" } }
    : { datasets: { rows }, data: { name: "rows" } };
}

/** Hover details: the subject first (when it may be shown), then the plotted values. */
export function tooltip(
  d: FigureBase,
  fields: { field: string; title: string; format?: string; type?: "quantitative" | "nominal" }[],
): Json[] {
  const who: Json[] = d.withSubjectIds
    ? [
        { field: "subject", type: "nominal", title: "Subject" },
        { field: "row", type: "quantitative", title: "Data row", format: "d" },
      ]
    : [];
  return [
    ...who,
    ...fields.map((f) => ({
      field: f.field,
      type: f.type ?? "quantitative",
      title: f.title,
      ...(f.type === "nominal" ? {} : { format: f.format ?? ".4~g" }),
    })),
    { field: "status", type: "nominal", title: "Status" },
  ];
}

/** Many points (below DENSE_FROM): smaller and lighter, so overlaps still read. */
export function crowded(d: FigureBase): boolean {
  return !d.dense && d.n >= CROWDED_FROM;
}

/**
 * Shape, colour and size by status: open triangles in the finding colour beyond a threshold.
 * A dense figure's points (except the Q-Q plot's) are all beyond a threshold, so its legend has
 * that one entry.
 */
export function statusEncoding(d: FigureBase, beyondOnly = Boolean(d.dense)): Json {
  const domain = beyondOnly ? [BEYOND] : [WITHIN, BEYOND];
  const pick = (within: unknown, beyond: unknown) => (beyondOnly ? [beyond] : [within, beyond]);
  const legend = { title: beyondOnly ? "Drawn one by one" : "Subjects" };
  return {
    shape: {
      field: "status",
      type: "nominal",
      scale: { domain, range: pick("circle", "triangle-up") },
      legend,
    },
    color: {
      field: "status",
      type: "nominal",
      scale: { domain, range: pick(PALETTE.pending, PALETTE.finding) },
      legend,
    },
    // ordinal scales, not conditions: no expression evaluated per point (Vega's CSP-safe interpreter is slow with many points)
    size: beyondOnly
      ? { value: 48 }
      : { field: "status", type: "ordinal", scale: { domain, range: [crowded(d) ? 8 : 16, 48] }, legend },
    opacity: beyondOnly
      ? { value: 1 }
      : { field: "status", type: "ordinal", scale: { domain, range: [crowded(d) ? 0.45 : 0.7, 1] }, legend },
  };
}

/** The subtitle line of a dense figure: what the shading counts and who is drawn one by one. */
export function denseLine(d: FigureBase, what: string, marks = "triangles"): string[] {
  if (!d.dense) return [];
  const { total, beyond, drawn } = d.dense;
  const points =
    beyond === 0
      ? "no subject is beyond a planned threshold"
      : drawn < beyond
        ? `${marks}: the ${count(drawn)} with the largest Cook's distance of the ${count(beyond)} subjects beyond a planned threshold`
        : `${marks}: the ${count(beyond)} subjects beyond a planned threshold`;
  return [`${count(total)} subjects: ${what}; ${points}.`];
}

/** A count with thousands separated ("9,394"). */
export function count(v: number): string {
  return v.toLocaleString("en-GB");
}

/**
 * The density layer of a dense scatter figure: a cell per occupied grid square, shaded by how many
 * subjects it holds (square-root scale, so a few subjects still show). Uses the fill channel, which
 * the open points never use, so its scale and legend stay apart from the status ones.
 */
export function cellsLayer(cells: readonly DensityCell[], xName: string, yName: string): Json {
  return {
    data: { values: cells },
    mark: { type: "rect", strokeWidth: 0, ...NO_ARIA },
    encoding: {
      x: { field: "x0", type: "quantitative" },
      x2: { field: "x1" },
      y: { field: "y0", type: "quantitative" },
      y2: { field: "y1" },
      // the legend names the ends only: sqrt-spaced middle labels crowd each other
      fill: {
        field: "count",
        type: "quantitative",
        scale: { type: "sqrt", zero: true, range: ["#ebe6da", PALETTE.pending] },
        legend: {
          title: "Subjects per cell",
          gradientLength: 110,
          values: [1, Math.max(1, ...cells.map((c) => c.count))],
          format: "d",
        },
      },
      tooltip: [
        { field: "count", type: "quantitative", title: "Subjects in this cell", format: "d" },
        { field: "xRange", type: "nominal", title: xName },
        { field: "yRange", type: "nominal", title: yName },
      ],
    },
  };
}

/** Box summaries drawn from the server's numbers: whisker rule, box from Q1 to Q3, median tick. */
export function boxLayers(boxes: readonly BoxSummary[], x: Json, yTitle: string, size: number): Json[] {
  const y = (field: string) => ({ field, type: "quantitative", title: yTitle });
  const tip = [
    { field: "level", type: "nominal", title: "Level" },
    { field: "n", type: "quantitative", title: "Subjects", format: "d" },
    { field: "median", type: "quantitative", title: "Median", format: ".4~g" },
    { field: "q1", type: "quantitative", title: "First quartile", format: ".4~g" },
    { field: "q3", type: "quantitative", title: "Third quartile", format: ".4~g" },
  ];
  // the boxes carry the level under the points' field name, so both layers share one sorted x domain
  const values = boxes.map((b) => ({ ...b, [String(x.field)]: b.level }));
  return [
    {
      data: { values },
      mark: { type: "rule", color: PALETTE.ink },
      encoding: { x, y: y("lower"), y2: { field: "upper" } },
    },
    {
      data: { values },
      mark: { type: "bar", size, fill: "#efeadf", stroke: PALETTE.ink, strokeWidth: 0.8 },
      encoding: { x, y: y("q1"), y2: { field: "q3" }, tooltip: tip },
    },
    {
      data: { values },
      mark: { type: "tick", size, thickness: 1.5, color: PALETTE.ink },
      encoding: { x, y: y("median") },
    },
  ];
}

/**
 * Marks drawn once per subject (or per cell) carry no ARIA description of their own: Vega-Lite
 * would otherwise build a sentence for every one of hundreds of marks, most of a figure's drawing
 * time, and read hundreds of points aloud one by one helps no one. The figure's frame names the
 * plot, and the check card beside it states the statistic, threshold and flagged subjects in words.
 */
export const NO_ARIA = { aria: false } as const;

export function pointMark(): Json {
  return { type: "point", filled: false, strokeWidth: 1.1, ...NO_ARIA };
}

/** A layer of reference marks draws once, not once per subject. */
export const ONE = { values: [{}] };

export function zeroRule(axis: "x" | "y"): Json {
  return {
    data: ONE,
    mark: { type: "rule", color: PALETTE.inkSoft, strokeDash: [4, 3], strokeWidth: 1 },
    encoding: { [axis]: { datum: 0 } },
  };
}

export function thresholdRule(axis: "x" | "y", t: Threshold, text: string): Json[] {
  const label =
    axis === "y"
      ? {
          type: "text",
          color: PALETTE.finding,
          fontSize: 10,
          align: "right",
          baseline: "bottom",
          x: "width",
          dy: -3,
        }
      : {
          type: "text",
          color: PALETTE.finding,
          fontSize: 10,
          align: "left",
          baseline: "top",
          y: 0,
          dx: 4,
          dy: 3,
        };
  return [
    {
      data: ONE,
      mark: { type: "rule", color: PALETTE.finding, strokeDash: [6, 3], strokeWidth: 1.2 },
      encoding: { [axis]: { datum: t.value } },
    },
    {
      data: ONE,
      mark: label,
      encoding: { [axis]: { datum: t.value }, text: { value: `${text} ${t.label}` } },
    },
  ];
}

/** The smoother, computed on the server (app/engine/loess.ts) and drawn as a line. */
export function loessLayer(smooth: readonly SmoothPoint[]): Json {
  return {
    data: { values: smooth },
    mark: { type: "line", color: PALETTE.accent, strokeWidth: 2.2 },
    encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } },
  };
}

/** The Vega-Lite schema every figure names. */
export const SCHEMA = "https://vega.github.io/schema/vega-lite/v6.json";

/** The alt text's sentence on the subjects a figure marks as beyond a planned threshold. */
export function markedSubjects(rows: readonly { status: string }[]): string {
  const beyond = rows.filter((row) => row.status === BEYOND).length;
  return `${beyond} subject${beyond === 1 ? " is" : "s are"} drawn as open triangles for being beyond a planned threshold.`;
}

/** A p-value in the figures' words: "= 0.1234" or "< 0.0001". */
export function pText(p: number): string {
  return p < 0.0001 ? "< 0.0001" : `= ${p.toFixed(4)}`;
}

/**
 * Marks the few most extreme points with their rank (field `labelRank`), a short number that
 * cannot run into its neighbours' names, beside the point: right of it, or left in the last fifth
 * of the axis. The names go in the ranked list beside the plot (rankedList).
 */
export function rankMarks(x: Json, y: Json, n: number): Json[] {
  const cut = Math.round(n * 0.8);
  return (["left", "right"] as const).map((align) => ({
    transform: [{ filter: `datum.labelRank != null && datum.order ${align === "left" ? "<=" : ">"} ${cut}` }],
    mark: {
      type: "text",
      align,
      dx: align === "left" ? 6 : -6,
      dy: -6,
      fontSize: 10,
      fontWeight: 600,
      color: PALETTE.finding,
      ...NO_ARIA,
    },
    encoding: { x, y, text: { field: "labelRank", type: "nominal" } },
  }));
}

/**
 * A ranked list drawn beside the plot, on its right (the plot narrows to make room, as Vega fits
 * the whole figure to the frame): a heading of two lines, then "1. name (detail)" per entry.
 */
export function rankedList(heading: [string, string], entries: readonly string[], empty: string): Json {
  const list = entries.length ? [...heading, ...entries.map((e, k) => `${k + 1}. ${e}`)] : [empty];
  return {
    data: { values: [{ list }] },
    mark: {
      type: "text",
      align: "left",
      baseline: "top",
      x: { expr: "width + 14" },
      y: 0,
      fontSize: 10,
      lineHeight: 14,
      color: PALETTE.ink,
      ...NO_ARIA,
    },
    encoding: { text: { field: "list", type: "nominal" } },
  };
}
