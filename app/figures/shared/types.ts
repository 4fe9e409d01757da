/**
 * Types every figure shares: who a point is, its status, the common part of a figure's data, and
 * the summaries a dense figure draws in place of thousands of points. Pure: no React, no DOM.
 */

export type { SmoothPoint } from "~/engine/loess";

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
  /** Set for a generalized linear model: its residual axes name the residual type and the link scale. */
  glm?: { family: "binomial" | "poisson" | "quasipoisson" | "negative-binomial"; link: string };
  /** Extra words shown under the title (e.g. a caveat for interaction models). */
  note?: string;
  /** Set when the figure has DENSE_FROM subjects or more: rows then hold only the subjects drawn one by one. */
  dense?: DenseSummary;
}

/** A planned threshold as applied. */
export interface Threshold {
  value: number;
  /** As the plan states it, e.g. "4/n = 0.0089". */
  label: string;
}

/** Bin status words of the binned residual plot, used in its legend and hover details. */
export const OUTSIDE_BAND = "outside its band";
export const INSIDE_BAND = "inside its band";
export type BinStatus = typeof OUTSIDE_BAND | typeof INSIDE_BAND;

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
