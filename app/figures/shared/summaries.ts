/**
 * Summaries that let a figure of many subjects draw fast and read clearly: counts of subjects in
 * the cells of a grid (a density layer in place of thousands of overlapping points), Tukey box
 * summaries computed once on the server, the largest value in blocks of consecutive subjects, and
 * which order statistics a Q-Q plot keeps. Pure functions; figure-data.server.ts applies them.
 */
import { extent, quantileSorted } from "d3-array";
import type { BoxSummary, DensityCell, InfluenceBlock } from "./types";

/** Six significant digits: plenty for drawing and hover, a smaller answer for large reruns (every figure's numbers). */
export function round(v: number): number {
  return Number.isFinite(v) ? Number(v.toPrecision(6)) : v;
}

function formatEdge(v: number): string {
  return String(Number(v.toPrecision(3)));
}

/** Equal bins along one axis: where the first starts, their width and how many. */
export interface AxisBins {
  origin: number;
  width: number;
  count: number;
}

/**
 * About `target` equal bins spanning the values. Whole-number values (ages, visit days) get bins
 * of a whole number of units centred on the values, so no bin holds one value more than its
 * neighbour only by where the edges fall; a single value gets one bin of width one.
 */
export function axisBins(values: readonly number[], target: number): AxisBins {
  const [lo, hi] = finiteExtent(values);
  if (!(hi > lo)) return { origin: lo - 0.5, width: 1, count: 1 };
  if (values.every((v) => !Number.isFinite(v) || Number.isInteger(v))) {
    const width = Math.max(1, Math.ceil((hi - lo + 1) / target));
    return { origin: lo - 0.5, width, count: Math.ceil((hi - lo + 1) / width) };
  }
  return { origin: lo, width: (hi - lo) / target, count: target };
}

/**
 * Counts of the points (x[i], y[i]) for the given indices in a grid of equal cells (usually bins
 * over every point of the figure, so the cells line up with the axes). Only cells holding at
 * least one point are returned.
 */
export function densityCells(
  x: readonly number[],
  y: readonly number[],
  indices: Iterable<number>,
  grid: { x: AxisBins; y: AxisBins },
): DensityCell[] {
  const { x: bx, y: by } = grid;
  const counts = new Map<number, number>();
  for (const i of indices) {
    if (!Number.isFinite(x[i]) || !Number.isFinite(y[i])) continue;
    const cx = Math.min(bx.count - 1, Math.max(0, Math.floor((x[i] - bx.origin) / bx.width)));
    const cy = Math.min(by.count - 1, Math.max(0, Math.floor((y[i] - by.origin) / by.width)));
    const key = cx * by.count + cy;
    counts.set(key, (counts.get(key) ?? 0) + 1);
  }
  return [...counts.entries()]
    .sort((a, b) => a[0] - b[0])
    .map(([key, count]) => {
      const cx = Math.floor(key / by.count);
      const cy = key % by.count;
      const cell = {
        x0: round(bx.origin + cx * bx.width),
        x1: round(bx.origin + (cx + 1) * bx.width),
        y0: round(by.origin + cy * by.width),
        y1: round(by.origin + (cy + 1) * by.width),
      };
      return {
        ...cell,
        count,
        xRange: `${formatEdge(cell.x0)} to ${formatEdge(cell.x1)}`,
        yRange: `${formatEdge(cell.y0)} to ${formatEdge(cell.y1)}`,
      };
    });
}

/** The extent of the finite values, or [0, 1] when there are none. */
export function finiteExtent(values: readonly number[]): [number, number] {
  const [lo, hi] = extent(values.filter(Number.isFinite));
  return lo === undefined || hi === undefined ? [0, 1] : [lo, hi];
}

/**
 * Tukey's box summary (Exploratory Data Analysis, 1977) of each level's values: quartiles by
 * linear interpolation between order statistics (Hyndman and Fan type 7, as d3-array's
 * quantileSorted), whiskers to the most extreme values within 1.5 × IQR of the box.
 */
export function boxSummaries(
  levels: readonly string[],
  levelOf: readonly string[],
  values: readonly number[],
): BoxSummary[] {
  const byLevel = new Map<string, number[]>(levels.map((l) => [l, []]));
  levelOf.forEach((level, i) => {
    if (Number.isFinite(values[i])) byLevel.get(level)?.push(values[i]);
  });
  return levels.flatMap((level) => {
    const v = (byLevel.get(level) ?? []).sort((a, b) => a - b);
    if (!v.length) return [];
    const q1 = quantileSorted(v, 0.25) ?? NaN;
    const median = quantileSorted(v, 0.5) ?? NaN;
    const q3 = quantileSorted(v, 0.75) ?? NaN;
    const reach = 1.5 * (q3 - q1);
    const lower = v.find((x) => x >= q1 - reach) ?? q1;
    const upper = [...v].reverse().find((x) => x <= q3 + reach) ?? q3;
    return [
      {
        level,
        n: v.length,
        q1: round(q1),
        median: round(median),
        q3: round(q3),
        lower: round(lower),
        upper: round(upper),
      },
    ];
  });
}

/**
 * The largest value in each block of consecutive positions (1-based, as the influence figure's
 * x axis), among the indices given: `blocks` blocks of equal length over 1..n.
 */
export function blockMaxima(
  values: readonly number[],
  indices: Iterable<number>,
  n: number,
  blocks: number,
): InfluenceBlock[] {
  const size = Math.max(1, Math.ceil(n / blocks));
  const max = new Map<number, number>();
  for (const i of indices) {
    if (!Number.isFinite(values[i])) continue;
    const b = Math.floor(i / size);
    if (values[i] > (max.get(b) ?? -Infinity)) max.set(b, values[i]);
  }
  return [...max.entries()]
    .sort((a, b) => a[0] - b[0])
    .map(([b, value]) => ({ from: b * size + 1, to: Math.min(n, (b + 1) * size), cooks: round(value) }));
}

/**
 * Which positions of a sorted sample of size m a Q-Q plot keeps: the `tail` smallest and largest
 * (where departures from normality show), every `step`-th in between, and any in `always`.
 */
export function qqKept(
  m: number,
  tail: number,
  middle: number,
  always: ReadonlySet<number>,
): { kept: number[]; step: number } {
  const inner = Math.max(0, m - 2 * tail);
  const step = Math.max(1, Math.ceil(inner / Math.max(1, middle)));
  const kept: number[] = [];
  for (let k = 0; k < m; k++)
    if (k < tail || k >= m - tail || (k - tail) % step === 0 || always.has(k)) kept.push(k);
  return { kept, step };
}
