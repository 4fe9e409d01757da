/**
 * A plain-words reading of the normal Q-Q shape of the residuals from the sample skewness and
 * excess kurtosis (moment estimators g₁, g₂; standard errors √(6/n), √(24/n), D'Agostino and
 * Stephens 1986, chapter 9) and the slopes of the Q-Q points in each tail relative to the middle
 * (Blom 1958 plotting positions).
 */
import { normalQuantile } from "./distributions";

export type QqReading = "close to normal" | "right-skewed" | "left-skewed" | "heavier tails" | "lighter tails";

export interface QqShape {
  readonly reading: QqReading;
  readonly skewness: number;
  readonly excessKurtosis: number;
  /** Slope of the lowest tenth of the Q-Q points divided by the slope of the middle half. */
  readonly lowerTailRatio: number;
  /** Slope of the highest tenth of the Q-Q points divided by the slope of the middle half. */
  readonly upperTailRatio: number;
  /** One sentence saying what the plot shows. */
  readonly summary: string;
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

/** Reads the Q-Q shape of a set of residuals (at least 8 for a reading other than "close to normal"). */
export function readQqShape(residuals: ArrayLike<number>): QqShape {
  const values = Float64Array.from(residuals).filter((v) => Number.isFinite(v)).sort();
  const n = values.length;
  let mean = 0;
  for (const v of values) mean += v;
  mean /= Math.max(1, n);
  let m2 = 0;
  let m3 = 0;
  let m4 = 0;
  for (const v of values) {
    const d = v - mean;
    m2 += d * d;
    m3 += d * d * d;
    m4 += d * d * d * d;
  }
  m2 /= n;
  m3 /= n;
  m4 /= n;
  const skewness = m2 > 0 ? m3 / Math.pow(m2, 1.5) : 0;
  const excessKurtosis = m2 > 0 ? m4 / (m2 * m2) - 3 : 0;
  const theoretical = new Float64Array(n);
  for (let i = 0; i < n; i++) theoretical[i] = normalQuantile((i + 1 - 0.375) / (n + 0.25));
  const tail = Math.max(2, Math.floor(n / 10));
  const middle = slope(theoretical, values, Math.floor(n / 4), Math.max(Math.floor(n / 4) + 2, Math.ceil((3 * n) / 4)));
  const lowerTailRatio = n >= 8 ? slope(theoretical, values, 0, tail) / middle : NaN;
  const upperTailRatio = n >= 8 ? slope(theoretical, values, n - tail, n) / middle : NaN;

  const skewLimit = Math.max(2 * Math.sqrt(6 / n), 0.3);
  const kurtosisLimit = Math.max(2 * Math.sqrt(24 / n), 0.6);
  let reading: QqReading = "close to normal";
  if (n >= 8) {
    if (Math.abs(skewness) > skewLimit) reading = skewness > 0 ? "right-skewed" : "left-skewed";
    else if (excessKurtosis > kurtosisLimit) reading = "heavier tails";
    else if (excessKurtosis < -kurtosisLimit) reading = "lighter tails";
  }
  const fmt = (v: number) => (Number.isFinite(v) ? v.toFixed(2) : "n/a");
  const summaries: Record<QqReading, string> = {
    "close to normal": `The points follow the line; skewness ${fmt(skewness)} and excess kurtosis ${fmt(excessKurtosis)} are within what chance gives for ${n} residuals.`,
    "right-skewed": `The upper end bends away above the line: a long right tail (skewness ${fmt(skewness)}).`,
    "left-skewed": `The lower end bends away below the line: a long left tail (skewness ${fmt(skewness)}).`,
    "heavier tails": `Both ends bend away from the line, outward: more extreme residuals than a normal gives (excess kurtosis ${fmt(excessKurtosis)}).`,
    "lighter tails": `Both ends bend toward the line's centre: fewer extreme residuals than a normal gives (excess kurtosis ${fmt(excessKurtosis)}).`,
  };
  return { reading, skewness, excessKurtosis, lowerTailRatio, upperTailRatio, summary: summaries[reading] };
}
