/**
 * A loess smoother for diagnostic plots: locally linear fits with tricube weights over the
 * nearest span·n points and two robustness iterations with bisquare weights (Cleveland 1979,
 * "Robust locally weighted regression and smoothing scatterplots", JASA 74, 829–836), evaluated
 * at a grid of x values and interpolated linearly between them for the robustness residuals
 * (the vertex-and-interpolation approach of Cleveland and Grosse 1991, "Computational methods
 * for local regression", Statistics and Computing 1, 47–62).
 *
 * Why not Vega's own loess transform: it fits at every data point in each of its three passes,
 * O(3·n·span·n); measured in Chromium at n = 10 000 it took about 2.7 s per figure, so a results
 * page with several smoothed figures was far from usable. On a grid this is O(3·G·span·n) plus
 * O(n) per pass: a few milliseconds.
 */

export interface SmoothPoint {
  readonly x: number;
  readonly y: number;
}

function tricube(u: number): number {
  if (u >= 1) return 0;
  const t = 1 - u * u * u;
  return t * t * t;
}

/** Local linear fit at x0 over the window [lo, hi] of sorted xs with robustness weights. */
function localFit(
  xs: Float64Array,
  ys: Float64Array,
  rw: Float64Array,
  lo: number,
  hi: number,
  x0: number,
): number {
  const maxDist = Math.max(x0 - xs[lo], xs[hi] - x0) || 1;
  let sw = 0;
  let sx = 0;
  let sy = 0;
  let sxx = 0;
  let sxy = 0;
  for (let k = lo; k <= hi; k++) {
    const w = tricube(Math.abs(xs[k] - x0) / (maxDist * 1.000001)) * rw[k];
    const dx = xs[k] - x0;
    sw += w;
    sx += w * dx;
    sy += w * ys[k];
    sxx += w * dx * dx;
    sxy += w * dx * ys[k];
  }
  if (sw <= 0) return NaN;
  const mx = sx / sw;
  const my = sy / sw;
  const vx = sxx / sw - mx * mx;
  // intercept of the local line at x0 (dx = 0)
  const slope = vx > 1e-12 * (maxDist * maxDist) ? (sxy / sw - mx * my) / vx : 0;
  return my - slope * mx;
}

/**
 * The loess curve of y on x at `gridSize` evenly spaced x values over the data's range.
 * Non-finite pairs are ignored. Returns an empty curve for fewer than 3 points.
 */
export function loessCurve(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  span = 0.5,
  gridSize = 120,
  iterations = 2,
): SmoothPoint[] {
  const idx: number[] = [];
  for (let i = 0; i < x.length; i++) if (Number.isFinite(x[i]) && Number.isFinite(y[i])) idx.push(i);
  idx.sort((a, b) => x[a] - x[b] || a - b);
  const n = idx.length;
  if (n < 3) return [];
  const xs = Float64Array.from(idx, (i) => x[i]);
  const ys = Float64Array.from(idx, (i) => y[i]);
  const lo = xs[0];
  const hi = xs[n - 1];
  if (hi === lo) return [];
  const q = Math.min(n, Math.max(3, Math.floor(span * n)));
  const g = Math.max(2, gridSize);
  const grid = Float64Array.from({ length: g }, (_, k) => lo + ((hi - lo) * k) / (g - 1));
  const rw = new Float64Array(n).fill(1);
  const fitted = new Float64Array(g);

  for (let iter = 0; iter <= iterations; iter++) {
    // sliding window of the q nearest neighbours of each grid value
    let left = 0;
    for (let k = 0; k < g; k++) {
      const x0 = grid[k];
      while (left + q < n && x0 - xs[left] > xs[left + q] - x0) left++;
      fitted[k] = localFit(xs, ys, rw, left, left + q - 1, x0);
    }
    if (iter === iterations) break;
    // robustness weights from residuals against the interpolated curve (bisquare, 6 × median |r|)
    const abs = new Float64Array(n);
    let j = 0;
    for (let i = 0; i < n; i++) {
      while (j < g - 2 && grid[j + 1] < xs[i]) j++;
      const t = (xs[i] - grid[j]) / (grid[j + 1] - grid[j]);
      abs[i] = Math.abs(ys[i] - (fitted[j] + t * (fitted[j + 1] - fitted[j])));
    }
    const sorted = Float64Array.from(abs).sort();
    const median = n % 2 ? sorted[(n - 1) / 2] : (sorted[n / 2 - 1] + sorted[n / 2]) / 2;
    if (!(median > 1e-12)) break;
    for (let i = 0; i < n; i++) {
      const u = abs[i] / (6 * median);
      rw[i] = u >= 1 ? 0 : (1 - u * u) ** 2;
    }
  }
  const out: SmoothPoint[] = [];
  for (let k = 0; k < g; k++) if (Number.isFinite(fitted[k])) out.push({ x: grid[k], y: fitted[k] });
  return out;
}
