/**
 * Vega-Lite specifications of a rerun's diagnostic figures and of the sensitivity comparison.
 * Pure: no React, no DOM. The server compiles them to Vega for the browser to draw
 * (draw-chart.ts); the appendix renders the same specifications to SVG and PNG on the server. Each builder takes rows already shaped on the
 * server (app/.server/reruns/figure-data.server.ts) and returns a complete specification.
 *
 * Every figure's title names the plot and its subtitle states what a healthy picture looks like;
 * axes carry units; hover details name the subject (id and data row) when the viewer may see them.
 * Points beyond a planned threshold are open triangles, the others small open circles, so status
 * is shape and word as well as colour.
 */
import type { TopLevelSpec } from "vega-lite";
import type { FigureKey } from "~/engine/checks";
import type { SmoothPoint } from "~/engine/loess";

export type { SmoothPoint } from "~/engine/loess";
import { COX_FIGURE_KEYS, coxFigureSpec, type CoxFigureData, type CoxSubjectFigureData } from "./cox";

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

/** Point status words, used in legends and hover details. */
export const BEYOND = "beyond a planned threshold";
export const WITHIN = "within the thresholds";
export type PointStatus = typeof BEYOND | typeof WITHIN;

/**
 * From this many subjects on, a figure draws the subjects as a density (counts in the cells of a
 * grid, or box summaries) and only the most influential subjects beyond a threshold one by one:
 * thousands of overlapping points hide more than they show, and each one costs the browser time.
 */
export const DENSE_FROM = 5_000;

/** The most subjects a dense figure draws one by one (the largest Cook's distances first). */
export const DENSE_POINTS = 250;

/** From this many subjects on (below DENSE_FROM), points are drawn smaller and lighter so overlaps still read. */
export const CROWDED_FROM = 2_000;

/** How a dense figure was thinned, for its subtitle. */
export interface DenseSummary {
  /** Subjects in the figure. */
  total: number;
  /** Of them, beyond a planned threshold. */
  beyond: number;
  /** Of those, drawn one by one. */
  drawn: number;
}

/** One cell of a density layer: the subjects whose point falls in [x0, x1) × [y0, y1). */
export interface DensityCell {
  x0: number;
  x1: number;
  y0: number;
  y1: number;
  count: number;
  /** The cell's edges in words, for hover ("1.2 to 1.4"). */
  xRange: string;
  yRange: string;
}

/** Tukey's box summary of one level's residuals, computed on the server. */
export interface BoxSummary {
  level: string;
  n: number;
  q1: number;
  median: number;
  q3: number;
  /** Whisker ends: the most extreme values within 1.5 × IQR of the box. */
  lower: number;
  upper: number;
}

/** The largest Cook's distance among subjects at positions from..to (1-based) not drawn one by one. */
export interface InfluenceBlock {
  from: number;
  to: number;
  cooks: number;
}

/** Who a point is: the subject id and the 1-based data row; both null when the viewer may not see subjects. */
export interface SubjectRef {
  subject: string | null;
  row: number | null;
}

export interface FigureBase {
  n: number;
  withSubjectIds: boolean;
  /** Response column name and how its unit is written on axes ("points", or "units of chg"). */
  response: string;
  responseUnit: string;
  /** True when residuals are the weighted ones, √w·(y − ŷ). */
  weighted: boolean;
  /** Extra words shown under the title (e.g. a caveat for interaction models). */
  note?: string;
  /** Set when the figure has DENSE_FROM subjects or more: rows then hold only the subjects drawn one by one. */
  dense?: DenseSummary;
}

export interface ResidualsFittedRow extends SubjectRef {
  fitted: number;
  residual: number;
  status: PointStatus;
}
export interface ResidualsFittedData extends FigureBase {
  figure: "residuals_fitted";
  rows: ResidualsFittedRow[];
  /** Dense figures: the subjects not drawn one by one. */
  cells?: DensityCell[];
  /** Loess smoother of the residuals on the fitted values (span 0.5). */
  smooth: SmoothPoint[];
}

export interface ResidualsCovariateRow extends SubjectRef {
  /** Covariate value (continuous) or level (categorical). */
  x: number | string;
  residual: number;
  /** Deterministic horizontal offset in [−1, 1] for strips of a categorical covariate. */
  jitter: number;
  status: PointStatus;
}
export interface ResidualsCovariateData extends FigureBase {
  figure: "residuals_covariate";
  term: string;
  termUnit: string;
  kind: "continuous" | "categorical";
  /** Level order for a categorical covariate, reference first. */
  levels?: string[];
  rows: ResidualsCovariateRow[];
  /** Dense figures of a continuous covariate: the subjects not drawn one by one. */
  cells?: DensityCell[];
  /** Box summaries of every subject's residuals by level (categorical covariates only). */
  boxes?: BoxSummary[];
  /** Loess smoother (continuous covariates only). */
  smooth?: SmoothPoint[];
}

export interface PartialResidualRow extends SubjectRef {
  x: number;
  /** Component plus residual. */
  partial: number;
  /** The fitted component b·x, centred. */
  component: number;
  status: PointStatus;
}
export interface PartialResidualsData extends FigureBase {
  figure: "partial_residuals";
  term: string;
  termUnit: string;
  coefficient: number;
  rows: PartialResidualRow[];
  /** The fitted component at the smallest and largest value of the covariate: a straight line. */
  fittedLine: { x: number; component: number }[];
  /** Dense figures: the subjects not drawn one by one. */
  cells?: DensityCell[];
  /** Loess smoother of the partial residuals on the covariate. */
  smooth: SmoothPoint[];
}

export interface QqRow extends SubjectRef {
  /** Blom plotting position quantile Φ⁻¹((i − 0.375)/(n + 0.25)). */
  theoretical: number;
  /** Internally studentized residual, sorted. */
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

export interface InfluenceRow extends SubjectRef {
  /** Position of the subject in data order, 1..n. */
  order: number;
  cooks: number;
  leverage: number;
  /** Null for generalized linear models, which have no DFFITS. */
  dffits: number | null;
  status: PointStatus;
  /** Set for the few most influential subjects: drawn beside their point. */
  label: string | null;
}
export interface Threshold {
  value: number;
  /** As the plan states it, e.g. "4/n = 0.0089". */
  label: string;
}
export interface InfluenceData extends FigureBase {
  figure: "influence";
  threshold: Threshold | null;
  rows: InfluenceRow[];
  /** Dense figures: the largest Cook's distance in blocks of consecutive subjects not drawn one by one. */
  blocks?: InfluenceBlock[];
}

export interface LeverageResidualRow extends SubjectRef {
  leverage: number;
  deletionResidual: number;
  cooks: number;
  status: PointStatus;
  label: string | null;
}
export interface LeverageResidualData extends FigureBase {
  figure: "leverage_residual";
  leverageThreshold: Threshold | null;
  residualThreshold: Threshold | null;
  rows: LeverageResidualRow[];
  /** Dense figures: the subjects not drawn one by one. */
  cells?: DensityCell[];
}

export interface SpreadRow extends SubjectRef {
  arm: string;
  residual: number;
  jitter: number;
  status: PointStatus;
}
export interface SpreadByArmData extends FigureBase {
  figure: "spread_by_arm";
  treatment: string;
  /** Arms in order, reference first. */
  levels: string[];
  /** Brown–Forsythe test across arms, as the rerun computed it. */
  test: { statistic: number; p: number } | null;
  rows: SpreadRow[];
  /** Box summaries of every subject's residuals by arm. */
  boxes: BoxSummary[];
}

/** Bin status words of the binned residual plot, used in its legend and hover details. */
export const OUTSIDE_BAND = "outside its band";
export const INSIDE_BAND = "inside its band";
export type BinStatus = typeof OUTSIDE_BAND | typeof INSIDE_BAND;

/** One bin of subjects of similar fitted probability (Gelman and Hill 2007, section 5.6). */
export interface BinnedResidualRow {
  /** 1-based, in order of fitted probability. */
  bin: number;
  /** Subjects in the bin. */
  n: number;
  meanFitted: number;
  /** Mean of y − fitted probability: the observed minus the predicted proportion of events. */
  meanResidual: number;
  /** Two standard errors of the mean residual under the model, 2·√(p̄(1 − p̄)/n); the band is ±bound. */
  bound: number;
  /** −bound, the band's lower edge. */
  lower: number;
  status: BinStatus;
}
export interface BinnedResidualsData extends FigureBase {
  figure: "binned_residuals";
  /** The event in words, e.g. "resp = 1". */
  event: string;
  rows: BinnedResidualRow[];
}

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

/** Figures that draw subjects one by one (their rows name the subject when the viewer may see it). */
export type SubjectFigureData =
  | ResidualsFittedData
  | ResidualsCovariateData
  | PartialResidualsData
  | QqData
  | InfluenceData
  | LeverageResidualData
  | SpreadByArmData;

/** Figures of a binomial model's fit, drawn from groups of subjects: their rows name no one. */
export type GroupFigureData = BinnedResidualsData | CalibrationData;

export type FigureData = SubjectFigureData | GroupFigureData | CoxFigureData;

/** True when the figure's rows are subjects (not bins or groups of them). */
export function plotsSubjects(d: FigureData): d is SubjectFigureData | CoxSubjectFigureData {
  return d.figure !== "binned_residuals" && d.figure !== "calibration" && d.figure !== "kaplan_meier" && d.figure !== "log_minus_log";
}

export interface SpecOptions {
  /** Pixel width, or "container" to follow the frame (browser). Default 560. */
  width?: number | "container";
  /**
   * Plot height in pixels (the title sits above). Default 230. "container": the whole figure,
   * title and legends included, fits the frame's height (browser), so a longer subtitle makes
   * the plot shorter instead of pushing the axis out of the frame.
   */
  height?: number | "container";
  /** Put the rows into the spec (default). Without, the spec reads the named dataset "rows". */
  inlineRows?: boolean;
  /** Server rendering: ARIA attributes off (a third smaller SVG). */
  forPrint?: boolean;
}

type Json = Record<string, unknown>;

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
    title: { anchor: "start", color: PALETTE.ink, fontSize: 13, fontWeight: 600, subtitleColor: PALETTE.inkSoft, subtitleFontSize: 11, subtitlePadding: 3, offset: 8 },
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
    legend: { labelColor: PALETTE.ink, titleColor: PALETTE.ink, labelFontSize: 10, titleFontSize: 10, labelLimit: 320, orient: "top", direction: "horizontal" },
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
  return { text: name, subtitle: [...wrapWords(`Healthy: ${healthy}`, chars), ...extra.flatMap((e) => wrapWords(e, chars))] };
}

export function frame(d: { n: number }, opts: SpecOptions): Json {
  return { width: opts.width ?? 560, height: opts.height ?? 230, config: baseConfig(opts.forPrint) };
}

export function dataOf(rows: readonly object[], opts: SpecOptions): Json {
  return opts.inlineRows === false ? { data: { name: "rows" } } : { datasets: { rows }, data: { name: "rows" } };
}

/** Hover details: the subject first (when it may be shown), then the plotted values. */
export function tooltip(d: FigureBase, fields: { field: string; title: string; format?: string; type?: "quantitative" | "nominal" }[]): Json[] {
  const who: Json[] = d.withSubjectIds
    ? [
        { field: "subject", type: "nominal", title: "Subject" },
        { field: "row", type: "quantitative", title: "Data row", format: "d" },
      ]
    : [];
  return [
    ...who,
    ...fields.map((f) => ({ field: f.field, type: f.type ?? "quantitative", title: f.title, ...(f.type === "nominal" ? {} : { format: f.format ?? ".4~g" }) })),
    { field: "status", type: "nominal", title: "Status" },
  ];
}

/** Many points (below DENSE_FROM): smaller and lighter, so overlaps still read. */
function crowded(d: FigureBase): boolean {
  return !d.dense && d.n >= CROWDED_FROM;
}

/**
 * Shape, colour and size by status: open triangles in the finding colour beyond a threshold.
 * A dense figure's points (except the Q-Q plot's) are all beyond a threshold, so its legend has
 * that one entry.
 */
function statusEncoding(d: FigureBase, beyondOnly = Boolean(d.dense)): Json {
  const domain = beyondOnly ? [BEYOND] : [WITHIN, BEYOND];
  const pick = (within: unknown, beyond: unknown) => (beyondOnly ? [beyond] : [within, beyond]);
  const legend = { title: beyondOnly ? "Drawn one by one" : "Subjects" };
  return {
    shape: { field: "status", type: "nominal", scale: { domain, range: pick("circle", "triangle-up") }, legend },
    color: { field: "status", type: "nominal", scale: { domain, range: pick(PALETTE.pending, PALETTE.finding) }, legend },
    // ordinal scales, not conditions: no expression evaluated per point (Vega's CSP-safe interpreter is slow with many points)
    size: beyondOnly ? { value: 48 } : { field: "status", type: "ordinal", scale: { domain, range: [crowded(d) ? 8 : 16, 48] }, legend },
    opacity: beyondOnly ? { value: 1 } : { field: "status", type: "ordinal", scale: { domain, range: [crowded(d) ? 0.45 : 0.7, 1] }, legend },
  };
}

/** The subtitle line of a dense figure: what the shading counts and who is drawn one by one. */
function denseLine(d: FigureBase, what: string): string[] {
  if (!d.dense) return [];
  const { total, beyond, drawn } = d.dense;
  const points =
    beyond === 0
      ? "no subject is beyond a planned threshold"
      : drawn < beyond
        ? `triangles: the ${count(drawn)} with the largest Cook's distance of the ${count(beyond)} subjects beyond a planned threshold`
        : `triangles: the ${count(beyond)} subjects beyond a planned threshold`;
  return [`${count(total)} subjects: ${what}; ${points}.`];
}

/** A count with thousands separated ("9,394"). */
function count(v: number): string {
  return v.toLocaleString("en-GB");
}

/**
 * The density layer of a dense scatter figure: a cell per occupied grid square, shaded by how many
 * subjects it holds (square-root scale, so a few subjects still show). Uses the fill channel, which
 * the open points never use, so its scale and legend stay apart from the status ones.
 */
function cellsLayer(cells: readonly DensityCell[], xName: string, yName: string): Json {
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
        legend: { title: "Subjects per cell", gradientLength: 110, values: [1, Math.max(1, ...cells.map((c) => c.count))], format: "d" },
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
function boxLayers(boxes: readonly BoxSummary[], x: Json, yTitle: string, size: number): Json[] {
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
    { data: { values }, mark: { type: "rule", color: PALETTE.ink }, encoding: { x, y: y("lower"), y2: { field: "upper" } } },
    { data: { values }, mark: { type: "bar", size, fill: "#efeadf", stroke: PALETTE.ink, strokeWidth: 0.8 }, encoding: { x, y: y("q1"), y2: { field: "q3" }, tooltip: tip } },
    { data: { values }, mark: { type: "tick", size, thickness: 1.5, color: PALETTE.ink }, encoding: { x, y: y("median") } },
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
  return { data: ONE, mark: { type: "rule", color: PALETTE.inkSoft, strokeDash: [4, 3], strokeWidth: 1 }, encoding: { [axis]: { datum: 0 } } };
}

export function thresholdRule(axis: "x" | "y", t: Threshold, text: string): Json[] {
  const label =
    axis === "y"
      ? { type: "text", color: PALETTE.finding, fontSize: 10, align: "right", baseline: "bottom", x: "width", dy: -3 }
      : { type: "text", color: PALETTE.finding, fontSize: 10, align: "left", baseline: "top", y: 0, dx: 4, dy: 3 };
  return [
    { data: ONE, mark: { type: "rule", color: PALETTE.finding, strokeDash: [6, 3], strokeWidth: 1.2 }, encoding: { [axis]: { datum: t.value } } },
    { data: ONE, mark: label, encoding: { [axis]: { datum: t.value }, text: { value: `${text} ${t.label}` } } },
  ];
}

function residualWord(d: FigureBase): string {
  return d.weighted ? "Weighted residual √w·(y − ŷ)" : `Residual, ${d.response} − fitted`;
}

/** The smoother, computed on the server (app/engine/loess.ts) and drawn as a line. */
export function loessLayer(smooth: readonly SmoothPoint[]): Json {
  return {
    data: { values: smooth },
    mark: { type: "line", color: PALETTE.accent, strokeWidth: 2.2 },
    encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } },
  };
}

export function residualsFittedSpec(d: ResidualsFittedData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "Residuals against fitted values",
      "an even band around zero with a flat smoother; no funnel, no curve.",
      ["Brass line: loess smoother (span 0.5), of every subject. Dashed: zero.", ...denseLine(d, "shading counts the subjects in each cell"), ...(d.note ? [d.note] : [])],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.cells ? [cellsLayer(d.cells, "Fitted", "Residual")] : []),
      zeroRule("y"),
      {
        mark: pointMark(),
        encoding: {
          x: { field: "fitted", type: "quantitative", title: `Fitted value of ${d.response} (${d.responseUnit})`, scale: { zero: false } },
          y: { field: "residual", type: "quantitative", title: `${residualWord(d)} (${d.responseUnit})` },
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "fitted", title: "Fitted" },
            { field: "residual", title: "Residual" },
          ]),
        },
      },
      loessLayer(d.smooth),
    ],
  });
}

export function residualsCovariateSpec(d: ResidualsCovariateData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const yAxis = { field: "residual", type: "quantitative", title: `${residualWord(d)} (${d.responseUnit})` };
  const tip = tooltip(d, [
    { field: "x", title: d.term, type: d.kind === "categorical" ? "nominal" : "quantitative" },
    { field: "residual", title: "Residual" },
  ]);
  const extra = [...(d.note ? [d.note] : [])];
  if (d.kind === "continuous") {
    return asSpec({
      $schema: "https://vega.github.io/schema/vega-lite/v6.json",
      ...frame(d, opts),
      title: title(
        `Residuals against ${d.term}`,
        "an even band around zero with a flat smoother; a curve suggests the wrong functional form.",
        ["Brass line: loess smoother (span 0.5), of every subject. Dashed: zero.", ...denseLine(d, "shading counts the subjects in each cell"), ...extra],
        width,
      ),
      ...dataOf(d.rows, opts),
      layer: [
        ...(d.cells ? [cellsLayer(d.cells, d.term, "Residual")] : []),
        zeroRule("y"),
        {
          mark: pointMark(),
          encoding: { x: { field: "x", type: "quantitative", title: `${d.term} (${d.termUnit})`, scale: { zero: false } }, y: yAxis, ...statusEncoding(d), tooltip: tip },
        },
        loessLayer(d.smooth ?? []),
      ],
    });
  }
  const x = { field: "x", type: "nominal", title: `${d.term} (level)`, sort: d.levels, axis: { labelAngle: 0 } };
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      `Residuals by ${d.term}`,
      "boxes centred on zero with similar heights at every level.",
      ["Boxes: quartiles and median of every subject; whiskers to 1.5 × IQR. Dashed: zero.", ...denseLine(d, "the boxes summarise them all"), ...extra],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      zeroRule("y"),
      ...boxLayers(d.boxes ?? [], x, yAxis.title, 36),
      {
        mark: pointMark(),
        encoding: { x, xOffset: { field: "jitter", type: "quantitative", scale: { domain: [-2.2, 2.2] } }, y: yAxis, ...statusEncoding(d), tooltip: tip },
      },
    ],
  });
}

export function partialResidualsSpec(d: PartialResidualsData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const xEnc = { field: "x", type: "quantitative", title: `${d.term} (${d.termUnit})`, scale: { zero: false } };
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      `Partial residuals for ${d.term}`,
      "the smoother follows the straight line of the fitted effect; a bend means the effect is not linear.",
      ["Grey line: fitted linear effect. Brass line: loess smoother (span 0.5), of every subject.", ...denseLine(d, "shading counts the subjects in each cell"), ...(d.note ? [d.note] : [])],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.cells ? [cellsLayer(d.cells, d.term, "Component + residual")] : []),
      {
        mark: pointMark(),
        encoding: {
          x: xEnc,
          y: { field: "partial", type: "quantitative", title: `Component plus residual (${d.responseUnit})` },
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "x", title: d.term },
            { field: "partial", title: "Component + residual" },
            { field: "component", title: "Fitted component" },
          ]),
        },
      },
      { data: { values: d.fittedLine }, mark: { type: "line", color: PALETTE.inkSoft, strokeWidth: 1.5 }, encoding: { x: xEnc, y: { field: "component", type: "quantitative" } } },
      loessLayer(d.smooth),
    ],
  });
}

/** How a dense Q-Q plot was thinned, in words. */
function qqThinningLine(d: QqData): string[] {
  if (!d.dense || !d.thinning) return [];
  const { tail, step } = d.thinning;
  return [`${count(d.dense.total)} subjects: drawn are the ${tail} smallest and ${tail} largest residuals, every ${step === 1 ? "" : `${ordinal(step)} `}one in between and the subjects shown one by one in the other figures.`];
}

function ordinal(k: number): string {
  const tens = k % 100;
  const suffix = tens >= 11 && tens <= 13 ? "th" : ({ 1: "st", 2: "nd", 3: "rd" } as Record<number, string>)[k % 10] ?? "th";
  return `${k}${suffix}`;
}

export function qqSpec(d: QqData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const first = d.rows[0]?.theoretical ?? -3;
  const last = d.rows[d.rows.length - 1]?.theoretical ?? 3;
  const line = [first, last].map((t) => ({ theoretical: t, sample: d.line.intercept + d.line.slope * t }));
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      `Normal Q-Q plot: ${d.reading}`,
      "the points lie along the line from end to end.",
      [d.summary, "Line through the quartiles; Blom plotting positions.", ...qqThinningLine(d), ...(d.note ? [d.note] : [])],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        data: { values: line },
        mark: { type: "line", color: PALETTE.accent, strokeWidth: 1.6 },
        encoding: { x: { field: "theoretical", type: "quantitative" }, y: { field: "sample", type: "quantitative" } },
      },
      {
        mark: pointMark(),
        encoding: {
          x: { field: "theoretical", type: "quantitative", title: "Normal quantile (standard normal units)" },
          y: { field: "sample", type: "quantitative", title: "Studentized residual (units of σ̂)" },
          ...statusEncoding(d, false),
          tooltip: tooltip(d, [
            { field: "theoretical", title: "Normal quantile" },
            { field: "sample", title: "Studentized residual" },
          ]),
        },
      },
    ],
  });
}

export function influenceSpec(d: InfluenceData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const tip = tooltip(d, [
    { field: "order", title: "Position in data order", format: "d" },
    { field: "cooks", title: "Cook's distance" },
    { field: "leverage", title: "Leverage" },
    { field: "dffits", title: "DFFITS" },
  ]);
  const x = { field: "order", type: "quantitative", title: "Subject, in data order (position 1 to n)", scale: { domain: [0, d.n + 1], nice: false } };
  const y = { field: "cooks", type: "quantitative", title: "Cook's distance (no unit)" };
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "Influence by subject (Cook's distance)",
      "every subject's bar well below the dashed threshold line; no single subject stands out.",
      [
        d.threshold ? `Dashed line: the plan's threshold ${d.threshold.label}.` : "The plan sets no Cook's distance threshold.",
        ...denseLine(d, `grey bars show the largest Cook's distance in each run of ${d.blocks?.[0] ? count(d.blocks[0].to - d.blocks[0].from + 1) : "a few"} consecutive subjects`),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.blocks
        ? [
            {
              data: { values: d.blocks },
              mark: { type: "rect", color: PALETTE.rule, ...NO_ARIA },
              encoding: {
                x: { ...x, field: "from" },
                x2: { field: "to" },
                y: { ...y, field: "cooks" },
                y2: { datum: 0 },
                tooltip: [
                  { field: "from", type: "quantitative", title: "From position", format: "d" },
                  { field: "to", type: "quantitative", title: "To position", format: "d" },
                  { field: "cooks", type: "quantitative", title: "Largest Cook's distance", format: ".4~g" },
                ],
              },
            },
          ]
        : crowded(d)
          ? []
          : [{ mark: { type: "rule", color: PALETTE.rule, strokeWidth: 1, ...NO_ARIA }, encoding: { x, y, y2: { datum: 0 } } }]),
      { mark: pointMark(), encoding: { x, y, ...statusEncoding(d), tooltip: tip } },
      ...(d.threshold ? thresholdRule("y", d.threshold, "threshold") : []),
      // labels on the right of their point, or on the left near the right edge
      {
        transform: [{ filter: `datum.label != null && datum.order <= ${Math.round(d.n * 0.8)}` }],
        mark: { type: "text", align: "left", dx: 6, dy: -2, fontSize: 10, color: PALETTE.finding },
        encoding: { x, y, text: { field: "label", type: "nominal" } },
      },
      {
        transform: [{ filter: `datum.label != null && datum.order > ${Math.round(d.n * 0.8)}` }],
        mark: { type: "text", align: "right", dx: -6, dy: -2, fontSize: 10, color: PALETTE.finding },
        encoding: { x, y, text: { field: "label", type: "nominal" } },
      },
    ],
  });
}

export function leverageResidualSpec(d: LeverageResidualData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  // room on the right for the label of the point with the largest leverage
  const maxLeverage = [...d.rows.map((r) => r.leverage), ...(d.cells ?? []).map((c) => c.x1)].reduce((m, v) => (Number.isFinite(v) && v > m ? v : m), d.leverageThreshold?.value ?? 0);
  const x = { field: "leverage", type: "quantitative", title: "Leverage (hat value, no unit)", scale: { domain: [0, maxLeverage * 1.18], nice: false }, axis: { tickCount: 6, format: ".2~r" } };
  const y = { field: "deletionResidual", type: "quantitative", title: "Deletion residual (units of σ̂₍ᵢ₎)" };
  const status = statusEncoding(d);
  const rules: Json[] = [];
  if (d.leverageThreshold) rules.push({ data: ONE, mark: { type: "rule", color: PALETTE.finding, strokeDash: [6, 3], strokeWidth: 1.2 }, encoding: { x: { datum: d.leverageThreshold.value } } });
  if (d.residualThreshold) {
    for (const v of [d.residualThreshold.value, -d.residualThreshold.value]) {
      rules.push({ data: ONE, mark: { type: "rule", color: PALETTE.finding, strokeDash: [6, 3], strokeWidth: 1.2 }, encoding: { y: { datum: v } } });
    }
  }
  const lines = [
    d.leverageThreshold ? `vertical: leverage ${d.leverageThreshold.label}` : null,
    d.residualThreshold ? `horizontal: deletion residual ${d.residualThreshold.label.replace(/^\|t\|\s*>\s*/, "beyond ±")}` : null,
  ].filter((s): s is string => s !== null);
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "Leverage against deletion residual",
      "points inside the dashed lines, none both far right and far from zero; point size is Cook's distance.",
      [
        lines.length ? `Dashed lines, the plan's thresholds: ${lines.join("; ")}.` : "The plan sets no leverage or residual threshold.",
        ...denseLine(d, "shading counts the subjects in each cell"),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.cells ? [cellsLayer(d.cells, "Leverage", "Deletion residual")] : []),
      zeroRule("y"),
      ...rules,
      {
        mark: pointMark(),
        encoding: {
          x,
          y,
          shape: status.shape,
          color: status.color,
          opacity: status.opacity,
          size: { field: "cooks", type: "quantitative", title: "Cook's distance", scale: { range: [crowded(d) ? 4 : 10, 400], zero: true }, legend: { format: ".2~r", tickCount: 3 } },
          tooltip: tooltip(d, [
            { field: "leverage", title: "Leverage" },
            { field: "deletionResidual", title: "Deletion residual" },
            { field: "cooks", title: "Cook's distance" },
          ]),
        },
      },
      {
        transform: [{ filter: "datum.label != null" }],
        mark: { type: "text", align: "left", dx: 8, dy: -4, fontSize: 10, color: PALETTE.finding },
        encoding: { x, y, text: { field: "label", type: "nominal" } },
      },
    ],
  });
}

export function spreadByArmSpec(d: SpreadByArmData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const x = { field: "arm", type: "nominal", title: `Treatment arm (${d.treatment})`, sort: d.levels, axis: { labelAngle: 0 } };
  const y = { field: "residual", type: "quantitative", title: `${residualWord(d)} (${d.responseUnit})` };
  const test = d.test ? `Brown–Forsythe across arms: F = ${d.test.statistic.toFixed(2)}, p ${d.test.p < 0.0001 ? "< 0.0001" : `= ${d.test.p.toFixed(4)}`}.` : "Brown–Forsythe test not computed.";
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "Residual spread by arm",
      "boxes of similar height in every arm, each centred on zero.",
      [`${test} Boxes: quartiles and median of every subject; whiskers to 1.5 × IQR.`, ...denseLine(d, "the boxes summarise them all"), ...(d.note ? [d.note] : [])],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      zeroRule("y"),
      ...boxLayers(d.boxes, x, y.title, 44),
      {
        mark: pointMark(),
        encoding: {
          x,
          xOffset: { field: "jitter", type: "quantitative", scale: { domain: [-2.2, 2.2] } },
          y,
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "arm", title: "Arm", type: "nominal" },
            { field: "residual", title: "Residual" },
          ]),
        },
      },
    ],
  });
}

/** A p-value in the figures' words: "= 0.1234" or "< 0.0001". */
function pText(p: number): string {
  return p < 0.0001 ? "< 0.0001" : `= ${p.toFixed(4)}`;
}

/**
 * Binned residual plot (Gelman and Hill 2007, Data Analysis Using Regression and
 * Multilevel/Hierarchical Models, section 5.6): the mean residual y − p̂ of each bin of subjects
 * with similar fitted probabilities, against the bin's mean fitted probability, inside a band of
 * ±2 standard errors. Bins outside their band are filled triangles in the finding colour, the
 * others open circles.
 */
export function binnedResidualsSpec(d: BinnedResidualsData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const bins = d.rows.length;
  const outside = d.rows.filter((r) => r.status === OUTSIDE_BAND).length;
  const sizes = d.rows.map((r) => r.n);
  const perBin = bins ? (Math.min(...sizes) === Math.max(...sizes) ? `${sizes[0]}` : `${Math.min(...sizes)} or ${Math.max(...sizes)}`) : "0";
  // about one bin in twenty lies outside its band by chance alone when the model holds
  const expected = 0.05 * bins < 1 ? "fewer than one expected by chance" : `about ${Math.round(0.05 * bins)} expected by chance`;
  const x = { field: "meanFitted", type: "quantitative", title: `Mean fitted probability of ${d.event} in the bin (probability, 0 to 1)`, scale: { zero: false }, axis: { tickCount: 6 } };
  // short enough to fit beside the plot's height: a longer rotated title pushes the plot apart
  const yTitle = "Mean of observed − fitted (proportion)";
  const band = (field: string) => ({ mark: { type: "line", color: PALETTE.inkSoft, strokeWidth: 1, ...NO_ARIA }, encoding: { x, y: { field, type: "quantitative", title: yTitle } } });
  const domain = [INSIDE_BAND, OUTSIDE_BAND];
  const legend = { title: "Bins" };
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "Binned residuals",
      "about 95% of bins inside the band, no pattern (no curve, no run of bins on one side of zero).",
      [
        `${outside} of ${bins} bins lie outside their band (${expected}).`,
        // the formula has no spaces, so it never breaks across lines
        `Bins of ${perBin} subjects by fitted probability. Grey band: ±2 standard errors, SE² = p̄(1−p̄)/n. Dashed: zero.`,
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      { mark: { type: "area", color: PALETTE.rule, opacity: 0.45, ...NO_ARIA }, encoding: { x, y: { field: "lower", type: "quantitative", title: yTitle }, y2: { field: "bound" } } },
      band("bound"),
      band("lower"),
      zeroRule("y"),
      {
        mark: { type: "point", strokeWidth: 1.4, size: 56, ...NO_ARIA },
        encoding: {
          x,
          y: { field: "meanResidual", type: "quantitative", title: yTitle },
          shape: { field: "status", type: "nominal", scale: { domain, range: ["circle", "triangle-up"] }, legend },
          color: { field: "status", type: "nominal", scale: { domain, range: [PALETTE.ink, PALETTE.finding] }, legend },
          // the triangles are filled, so the bins outside stand out in shape and weight as well as colour
          fill: { field: "status", type: "nominal", scale: { domain, range: ["transparent", PALETTE.finding] }, legend },
          tooltip: [
            { field: "bin", type: "quantitative", title: "Bin", format: "d" },
            { field: "n", type: "quantitative", title: "Subjects", format: "d" },
            { field: "meanFitted", type: "quantitative", title: "Mean fitted probability", format: ".4~g" },
            { field: "meanResidual", type: "quantitative", title: "Mean residual", format: ".4~g" },
            { field: "bound", type: "quantitative", title: "Band, ±", format: ".4~g" },
            { field: "status", type: "nominal", title: "Status" },
          ],
        },
      },
    ],
  });
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
  const x = { field: "meanPredicted", type: "quantitative", title: `Mean predicted probability of ${d.event} in the group (probability, 0 to 1)`, scale, axis: { tickCount: 6 } };
  // a short rotated title: servers without a canvas estimate text widths generously, and a title
  // longer than the plot's height would push the plot away from its subtitle
  const y = { field: "observedProportion", type: "quantitative", title: "Observed proportion (0 to 1)", scale };
  const t = d.test;
  const test =
    t.statistic !== null && Number.isFinite(t.statistic) && t.df !== null && t.p !== null
      ? `Hosmer–Lemeshow χ² = ${t.statistic.toFixed(2)} on ${t.df} df, p ${pText(t.p)}.`
      : "Hosmer–Lemeshow statistic not computed.";
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    ...frame(d, opts),
    title: title(
      "Calibration by group of predicted risk",
      "every point on the brass line observed = predicted, with no bend at either end.",
      // short, and the sizes in words instead of a legend: the results page's frame is of fixed height
      [`${test} ${d.caution}`, `Points: the ${d.rows.length} groups of the test, ${sizeWords} subjects each, area by size.`, ...(d.note ? [d.note] : [])],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        data: { values: [{ meanPredicted: lo, observedProportion: lo }, { meanPredicted: hi, observedProportion: hi }] },
        mark: { type: "line", color: PALETTE.accent, strokeWidth: 1.6, ...NO_ARIA },
        encoding: { x, y },
      },
      {
        mark: { type: "point", filled: false, color: PALETTE.ink, strokeWidth: 1.4, ...NO_ARIA },
        encoding: {
          x,
          y,
          size: { field: "n", type: "quantitative", title: "Subjects in the group", scale: { zero: true, range: [0, 320] }, legend: null },
          tooltip: [
            { field: "group", type: "quantitative", title: "Group", format: "d" },
            { field: "n", type: "quantitative", title: "Subjects", format: "d" },
            { field: "meanPredicted", type: "quantitative", title: "Mean predicted probability", format: ".4~g" },
            { field: "observedProportion", type: "quantitative", title: "Observed proportion", format: ".4~g" },
            { field: "observed", type: "quantitative", title: "Events observed", format: "d" },
            { field: "expected", type: "quantitative", title: "Events expected", format: ".4~g" },
          ],
        },
      },
    ],
  });
}

/** The specification of one diagnostic figure from its shaped data. */
export function figureSpec(d: FigureData, opts: SpecOptions = {}): TopLevelSpec {
  switch (d.figure) {
    case "residuals_fitted":
      return residualsFittedSpec(d, opts);
    case "residuals_covariate":
      return residualsCovariateSpec(d, opts);
    case "partial_residuals":
      return partialResidualsSpec(d, opts);
    case "qq":
      return qqSpec(d, opts);
    case "influence":
      return influenceSpec(d, opts);
    case "leverage_residual":
      return leverageResidualSpec(d, opts);
    case "spread_by_arm":
      return spreadByArmSpec(d, opts);
    case "binned_residuals":
      return binnedResidualsSpec(d, opts);
    case "calibration":
      return calibrationSpec(d, opts);
    default:
      return coxFigureSpec(d, opts);
  }
}

/** Every figure key, in results-page order. */
export const FIGURE_KEYS: readonly FigureKey[] = [
  "residuals_fitted",
  "residuals_covariate",
  "partial_residuals",
  "qq",
  "influence",
  "leverage_residual",
  "spread_by_arm",
  "binned_residuals",
  "calibration",
  ...COX_FIGURE_KEYS,
];

// ---- sensitivity comparison ------------------------------------------------------------------

/** One analysis in the forest-style comparison of the treatment contrast. */
export interface ForestRow {
  label: string;
  estimate: number;
  lower: number;
  upper: number;
  prespecified: boolean;
  primary: boolean;
}

export interface ForestPoint extends ForestRow {
  /** The axis label: the analysis with "primary" or "not pre-specified" in words. */
  axisLabel: string;
  kind: "Primary analysis" | "Pre-specified sensitivity" | "Not pre-specified";
  interval: string;
}

/** Shapes the rows (primary first) and writes each one's words. */
export function forestPoints(rows: readonly ForestRow[], digits = 2): ForestPoint[] {
  const ordered = [...rows.filter((r) => r.primary), ...rows.filter((r) => !r.primary)];
  return ordered.map((r) => {
    const kind = r.primary ? "Primary analysis" : r.prespecified ? "Pre-specified sensitivity" : "Not pre-specified";
    // the words come first, so a long analysis label is what gets shortened, never the words
    const axisLabel = r.primary ? (/^primary\b/i.test(r.label) ? r.label : `Primary: ${r.label}`) : r.prespecified ? r.label : `Not pre-specified: ${r.label}`;
    return { ...r, kind, axisLabel, interval: `${r.estimate.toFixed(digits)} (${r.lower.toFixed(digits)} to ${r.upper.toFixed(digits)})` };
  });
}

/**
 * Forest-style chart of the treatment contrast with its 95% CI per analysis: primary first and
 * filled, pre-specified sensitivity analyses as open squares, analyses the plan did not name as
 * open triangles and labelled "not pre-specified" on the axis. A brass band marks the primary CI.
 */
export function forestSpec(rows: readonly ForestRow[], contrastLabel: string, opts: SpecOptions & { unit?: string } = {}): TopLevelSpec {
  const points = forestPoints(rows);
  const width = opts.width ?? 560;
  const primary = points.find((p) => p.primary);
  const y = { field: "axisLabel", type: "nominal", title: null, sort: points.map((p) => p.axisLabel), axis: { labelLimit: 420, labelFontSize: 11, labelColor: PALETTE.ink } };
  // a ratio (hazard, odds, risk or rate ratio) is compared on the log scale, no effect at one
  const ratio = /ratio\)$/.test(contrastLabel);
  const x = ratio
    ? { field: "estimate", type: "quantitative", title: `${contrastLabel}, 95% CI (log scale)`, scale: { type: "log" } }
    : { field: "estimate", type: "quantitative", title: `${contrastLabel}${/restricted mean/.test(contrastLabel) ? "" : ": difference in adjusted means"}${opts.unit ? ` (${opts.unit})` : ""}, 95% CI` };
  const noEffect = ratio ? { data: ONE, mark: { type: "rule", color: PALETTE.inkSoft, strokeDash: [4, 3], strokeWidth: 1 }, encoding: { x: { datum: 1 } } } : zeroRule("x");
  const kinds = ["Primary analysis", "Pre-specified sensitivity", "Not pre-specified"];
  return asSpec({
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    width,
    height: Math.max(60, points.length * 28),
    config: baseConfig(opts.forPrint),
    title: title(
      `Treatment contrast across analyses: ${contrastLabel}`,
      `every interval close to the primary one and on the same side of ${ratio ? "one" : "zero"}, so the conclusion does not hang on one analysis.`,
      [primary ? `Shaded band: the primary analysis's 95% CI. Dashed: ${ratio ? "ratio of one, " : ""}no difference.` : `Dashed: ${ratio ? "ratio of one, " : ""}no difference.`],
      width,
    ),
    datasets: { rows: points },
    data: { name: "rows" },
    layer: [
      ...(primary
        ? [{ data: { values: [{ lower: primary.lower, upper: primary.upper }] }, mark: { type: "rect", color: PALETTE.accent, opacity: 0.12 }, encoding: { x: { field: "lower", type: "quantitative" }, x2: { field: "upper" } } }]
        : []),
      noEffect,
      { mark: { type: "rule", strokeWidth: 1.6, color: PALETTE.ink }, encoding: { y, x: { field: "lower", type: "quantitative", title: x.title, ...(ratio ? { scale: { type: "log" } } : {}) }, x2: { field: "upper" } } },
      {
        mark: { type: "point", filled: false, strokeWidth: 1.6, size: 80 },
        encoding: {
          y,
          x,
          shape: { field: "kind", type: "nominal", scale: { domain: kinds, range: ["diamond", "square", "triangle-up"] }, legend: { title: null } },
          color: { field: "kind", type: "nominal", scale: { domain: kinds, range: [PALETTE.ink, PALETTE.within, PALETTE.finding] }, legend: { title: null } },
          fill: { field: "kind", type: "nominal", scale: { domain: kinds, range: [PALETTE.ink, "transparent", "transparent"] }, legend: { title: null } },
          tooltip: [
            { field: "label", type: "nominal", title: "Analysis" },
            { field: "kind", type: "nominal", title: "Kind" },
            { field: "estimate", type: "quantitative", title: "Estimate", format: ".3f" },
            { field: "lower", type: "quantitative", title: "95% CI lower", format: ".3f" },
            { field: "upper", type: "quantitative", title: "95% CI upper", format: ".3f" },
          ],
        },
      },
    ],
  });
}
