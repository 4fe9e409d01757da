/**
 * A plain-words reading of the normal Q-Q shape of the residuals, read so that one subject
 * cannot make the whole sample look skewed:
 *
 * - moment skewness and excess kurtosis (g₁, g₂; standard errors √(6/n), √(24/n), D'Agostino and
 *   Stephens 1986, chapter 9), with all residuals and again without the single most extreme one;
 * - quantile-based skewness from the deciles, Kelly's measure (P₉₀ + P₁₀ − 2P₅₀)/(P₉₀ − P₁₀)
 *   (Kelly 1924, Statistical Method, Macmillan; 0 for any symmetric distribution);
 * - quantile-based tail weight from the octiles, Moors' measure ((E₇ − E₅) + (E₃ − E₁))/(E₆ − E₂)
 *   (Moors 1988, "A quantile alternative for kurtosis", The Statistician 37, 25–32; 1.233 for the
 *   normal, 1 for the uniform, larger for heavier tails).
 *
 * The quantile measures are bounded by twice their standard error under normality, from the joint
 * asymptotic normality of sample quantiles (Serfling 1980, Approximation Theorems of Mathematical
 * Statistics, section 2.3.3) by the delta method. Sample quantiles are Hyndman and Fan's type 7
 * (d3-array's quantileSorted). The slopes of the Q-Q points in each tail relative to the middle
 * use Blom's (1958) plotting positions.
 *
 * The reading, in order: close to normal when the moments and the quantile measures are within
 * their limits; "one extreme residual" when the moments depart only because of one residual
 * (without it they are within their limits, and the quantile measures are within theirs): one
 * subject to look at, not a skewed distribution; skewed when the quantiles say so, or the moments
 * with and without the most extreme residual agree on it; otherwise the tails (quantiles, then
 * kurtosis without and with the most extreme residual). A skewness carried by one residual is
 * said in the summary.
 */
import { quantileSorted } from "d3-array";
import { normalDensity, normalQuantile } from "./distributions";
import { sortNumbers } from "./sort-numbers";

export type QqReading =
  | "close to normal"
  | "one extreme residual"
  | "right-skewed"
  | "left-skewed"
  | "heavier tails"
  | "lighter tails";

export interface QqShape {
  readonly reading: QqReading;
  readonly skewness: number;
  readonly excessKurtosis: number;
  /** Moment skewness and excess kurtosis without the residual farthest from the median. */
  readonly withoutMostExtreme: {
    readonly residual: number;
    readonly skewness: number;
    readonly excessKurtosis: number;
  };
  /** Kelly's decile skewness (0 for a normal). */
  readonly quantileSkewness: number;
  /** Moors' octile tail weight (1.233 for a normal). */
  readonly quantileTailWeight: number;
  /** Slope of the lowest tenth of the Q-Q points divided by the slope of the middle half. */
  readonly lowerTailRatio: number;
  /** Slope of the highest tenth of the Q-Q points divided by the slope of the middle half. */
  readonly upperTailRatio: number;
  /** One sentence saying what the plot shows. */
  readonly summary: string;
}

/** Kelly's skewness from the deciles of sorted values. */
export function kellySkewness(sorted: ArrayLike<number>): number {
  const q = (p: number) => quantileSorted(sorted as number[], p) as number;
  const [p10, p50, p90] = [q(0.1), q(0.5), q(0.9)];
  return p90 > p10 ? (p90 + p10 - 2 * p50) / (p90 - p10) : 0;
}

/** Moors' tail weight from the octiles of sorted values. */
export function moorsTailWeight(sorted: ArrayLike<number>): number {
  const e = (i: number) => quantileSorted(sorted as number[], i / 8) as number;
  const spread = e(6) - e(2);
  return spread > 0 ? (e(7) - e(5) + (e(3) - e(1))) / spread : NaN;
}

/** Moors' tail weight of the normal distribution, from its octiles. */
export const NORMAL_TAIL_WEIGHT = (() => {
  const e = (i: number) => normalQuantile(i / 8);
  return (e(7) - e(5) + (e(3) - e(1))) / (e(6) - e(2));
})();

/**
 * Standard error, under normality, of a function of sample quantiles at probabilities `ps`:
 * √(∇gᵀ Σ ∇g / n) with Σᵢⱼ = min(pᵢ, pⱼ)(1 − max(pᵢ, pⱼ)) / (φ(zᵢ) φ(zⱼ)) (Serfling 1980, 2.3.3),
 * the gradient taken by central differences at the normal quantiles.
 */
function quantileMeasureSE(ps: readonly number[], g: (q: readonly number[]) => number, n: number): number {
  const z = ps.map((p) => normalQuantile(p));
  const h = 1e-6;
  const grad = z.map((_, i) => {
    const up = z.map((v, j) => (j === i ? v + h : v));
    const down = z.map((v, j) => (j === i ? v - h : v));
    return (g(up) - g(down)) / (2 * h);
  });
  let v = 0;
  for (let i = 0; i < ps.length; i++) {
    for (let j = 0; j < ps.length; j++) {
      const lo = Math.min(ps[i], ps[j]);
      const hi = Math.max(ps[i], ps[j]);
      v += (grad[i] * grad[j] * lo * (1 - hi)) / (normalDensity(z[i]) * normalDensity(z[j]));
    }
  }
  return Math.sqrt(v / n);
}

const KELLY_PS = [0.1, 0.5, 0.9];
const kellyOf = (q: readonly number[]) => (q[2] + q[0] - 2 * q[1]) / (q[2] - q[0]);
const MOORS_PS = [1, 2, 3, 5, 6, 7].map((i) => i / 8);
const moorsOf = (q: readonly number[]) => (q[5] - q[3] + (q[2] - q[0])) / (q[4] - q[1]);

/** Standard errors of Kelly's skewness and Moors' tail weight for n normal values. */
export function quantileMeasureStandardErrors(n: number): { skewness: number; tailWeight: number } {
  return {
    skewness: quantileMeasureSE(KELLY_PS, kellyOf, n),
    tailWeight: quantileMeasureSE(MOORS_PS, moorsOf, n),
  };
}

function slope(x: Float64Array, y: Float64Array, from: number, to: number): number {
  const m = to - from;
  let mx = 0;
  let my = 0;
  for (let i = from; i < to; i++) {
    mx += x[i];
    my += y[i];
  }
  mx /= m;
  my /= m;
  let sxy = 0;
  let sxx = 0;
  for (let i = from; i < to; i++) {
    sxy += (x[i] - mx) * (y[i] - my);
    sxx += (x[i] - mx) ** 2;
  }
  return sxx > 0 ? sxy / sxx : NaN;
}

/** Moment skewness g₁ and excess kurtosis g₂ of values. */
function moments(values: ArrayLike<number>): { skewness: number; excessKurtosis: number } {
  const n = values.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += values[i];
  mean /= Math.max(1, n);
  let m2 = 0;
  let m3 = 0;
  let m4 = 0;
  for (let i = 0; i < n; i++) {
    const d = values[i] - mean;
    m2 += d * d;
    m3 += d * d * d;
    m4 += d * d * d * d;
  }
  m2 /= n;
  m3 /= n;
  m4 /= n;
  return { skewness: m2 > 0 ? m3 / Math.pow(m2, 1.5) : 0, excessKurtosis: m2 > 0 ? m4 / (m2 * m2) - 3 : 0 };
}

type Shape = "close to normal" | "right-skewed" | "left-skewed" | "heavier tails" | "lighter tails";

/** The tails by the excess kurtosis alone, against twice its standard error (with a floor). */
function tailsOf(m: { excessKurtosis: number }, n: number): Shape {
  const kurtosisLimit = Math.max(2 * Math.sqrt(24 / n), 0.6);
  if (m.excessKurtosis > kurtosisLimit) return "heavier tails";
  if (m.excessKurtosis < -kurtosisLimit) return "lighter tails";
  return "close to normal";
}

/** The moment reading: skewness first, then tails, against twice their standard errors (with floors). */
function momentShape(m: { skewness: number; excessKurtosis: number }, n: number): Shape {
  const skewLimit = Math.max(2 * Math.sqrt(6 / n), 0.3);
  if (Math.abs(m.skewness) > skewLimit) return m.skewness > 0 ? "right-skewed" : "left-skewed";
  return tailsOf(m, n);
}

/** The quantile reading: Kelly's skewness and Moors' tail weight against twice their standard errors under normality (with floors). */
function quantileShape(kelly: number, moors: number, n: number): Shape {
  const se = quantileMeasureStandardErrors(n);
  if (Math.abs(kelly) > Math.max(2 * se.skewness, 0.05)) return kelly > 0 ? "right-skewed" : "left-skewed";
  if (moors - NORMAL_TAIL_WEIGHT > Math.max(2 * se.tailWeight, 0.05)) return "heavier tails";
  if (NORMAL_TAIL_WEIGHT - moors > Math.max(2 * se.tailWeight, 0.05)) return "lighter tails";
  return "close to normal";
}

/** The finite values, sorted (a counted copy: `filter` calls a function per value and took longer than the sort). */
function finiteSorted(residuals: ArrayLike<number>): Float64Array {
  let count = 0;
  for (let i = 0; i < residuals.length; i++) if (Number.isFinite(residuals[i])) count++;
  const out = new Float64Array(count);
  for (let i = 0, k = 0; i < residuals.length; i++)
    if (Number.isFinite(residuals[i])) out[k++] = residuals[i];
  return sortNumbers(out);
}

/** Reads the Q-Q shape of a set of residuals (at least 8 for a reading other than "close to normal"). */
export function readQqShape(residuals: ArrayLike<number>): QqShape {
  const values = finiteSorted(residuals);
  const n = values.length;
  const all = moments(values);
  const median = n > 0 ? (quantileSorted(values as unknown as number[], 0.5) as number) : NaN;
  // the residual farthest from the median is one of the two ends of the sorted values
  const dropFirst = n > 0 && Math.abs(values[0] - median) > Math.abs(values[n - 1] - median);
  const extreme = n > 0 ? (dropFirst ? values[0] : values[n - 1]) : NaN;
  const rest = dropFirst ? values.subarray(1) : values.subarray(0, Math.max(0, n - 1));
  const without = moments(rest);
  const kelly = n > 0 ? kellySkewness(values) : NaN;
  const moors = n > 0 ? moorsTailWeight(values) : NaN;

  // Blom's positions, only in the three stretches the slopes read (a normal quantile each)
  const theoretical = new Float64Array(n);
  const tail = Math.max(2, Math.floor(n / 10));
  const middleFrom = Math.floor(n / 4);
  const middleTo = Math.max(Math.floor(n / 4) + 2, Math.ceil((3 * n) / 4));
  const blom = (from: number, to: number) => {
    for (let i = Math.max(0, from); i < Math.min(n, to); i++)
      theoretical[i] = normalQuantile((i + 1 - 0.375) / (n + 0.25));
  };
  if (n >= 8) {
    blom(0, tail);
    blom(n - tail, n);
  }
  blom(middleFrom, middleTo);
  const middle = slope(theoretical, values, middleFrom, middleTo);
  const lowerTailRatio = n >= 8 ? slope(theoretical, values, 0, tail) / middle : NaN;
  const upperTailRatio = n >= 8 ? slope(theoretical, values, n - tail, n) / middle : NaN;

  let reading: QqReading = "close to normal";
  let skewFromOne = false;
  if (n >= 8) {
    const byMoments = momentShape(all, n);
    const withoutOne = momentShape(without, n - 1);
    const byQuantiles = quantileShape(kelly, moors, n);
    const skewed = (x: QqReading) => x === "right-skewed" || x === "left-skewed";
    if (byMoments === "close to normal" && byQuantiles === "close to normal") reading = "close to normal";
    else if (withoutOne === "close to normal" && byQuantiles === "close to normal")
      reading = "one extreme residual";
    // skewness only when the quantiles show it, or the moments show it with and without the most
    // extreme residual, the same way (dropping one end of symmetric heavy tails leaves a lean)
    else if (skewed(byQuantiles)) reading = byQuantiles;
    else if (skewed(withoutOne) && withoutOne === byMoments) reading = withoutOne;
    // otherwise the tails, as the quantiles or the kurtosis (without, then with, the most extreme residual) read them
    else
      reading =
        [byQuantiles, tailsOf(without, n - 1), tailsOf(all, n)].find((x) => x !== "close to normal") ??
        byMoments;
    skewFromOne = skewed(byMoments) && !skewed(reading) && reading !== "one extreme residual";
  }
  const fmt = (v: number) => (Number.isFinite(v) ? v.toFixed(2).replace(/^-/, "−") : "n/a");
  const quantileWords = `quantile skewness ${fmt(kelly)} (Kelly; 0 for a normal), tail weight ${fmt(moors)} (Moors; ${NORMAL_TAIL_WEIGHT.toFixed(2)} for a normal)`;
  const fromOne = skewFromOne
    ? ` The skewness of ${fmt(all.skewness)} comes from one residual (${fmt(extreme)}): ${fmt(without.skewness)} without it.`
    : "";
  const summaries: Record<QqReading, string> = {
    "close to normal": `The points follow the line; skewness ${fmt(all.skewness)} and excess kurtosis ${fmt(all.excessKurtosis)} are within what chance gives for ${n} residuals, as are the ${quantileWords}.`,
    "one extreme residual": `One extreme residual (${fmt(extreme)}); otherwise close to normal: skewness ${fmt(all.skewness)} with all ${n} residuals and ${fmt(without.skewness)} without that one, excess kurtosis ${fmt(all.excessKurtosis)} and ${fmt(without.excessKurtosis)}; ${quantileWords}.`,
    "right-skewed": `The upper end bends away above the line: a long right tail (skewness ${fmt(all.skewness)}; without the most extreme residual ${fmt(without.skewness)}; ${quantileWords}).`,
    "left-skewed": `The lower end bends away below the line: a long left tail (skewness ${fmt(all.skewness)}; without the most extreme residual ${fmt(without.skewness)}; ${quantileWords}).`,
    "heavier tails": `Both ends bend away from the line, outward: more extreme residuals than a normal gives (excess kurtosis ${fmt(all.excessKurtosis)}; without the most extreme residual ${fmt(without.excessKurtosis)}; ${quantileWords}).${fromOne}`,
    "lighter tails": `Both ends bend toward the line's centre: fewer extreme residuals than a normal gives (excess kurtosis ${fmt(all.excessKurtosis)}; ${quantileWords}).${fromOne}`,
  };
  return {
    reading,
    skewness: all.skewness,
    excessKurtosis: all.excessKurtosis,
    withoutMostExtreme: {
      residual: extreme,
      skewness: without.skewness,
      excessKurtosis: without.excessKurtosis,
    },
    quantileSkewness: kelly,
    quantileTailWeight: moors,
    lowerTailRatio,
    upperTailRatio,
    summary: summaries[reading],
  };
}
