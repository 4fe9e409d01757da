/**
 * The Q-Q reading (app/engine/qq-shape.ts) on worked cases: residuals that are exact quantiles of a
 * known distribution (Blom 1958 plotting positions), so the expected shape is known by
 * construction, and the quantile measures against their definitions:
 * - Kelly's decile skewness (Kelly 1924, Statistical Method): 0 for a symmetric distribution, and
 *   for the exponential (ln 10 + ln(10/9) − 2 ln 2)/(ln 10 − ln(10/9)) = 0.46497, worked here from
 *   the exponential's quantile function −ln(1 − p);
 * - Moors' octile tail weight (Moors 1988, The Statistician 37, 25–32): 1.233 for the normal and
 *   1 for the uniform (both as the paper gives them, recalled from memory, and worked here from
 *   the quantile functions).
 * Their standard errors under normality are checked against a seeded simulation.
 */
import { describe, expect, it } from "vitest";
import { normalQuantile, tQuantile } from "~/engine/distributions";
import {
  kellySkewness,
  moorsTailWeight,
  NORMAL_TAIL_WEIGHT,
  quantileMeasureStandardErrors,
  readQqShape,
} from "~/engine/qq-shape";

const blom = (n: number, q: (p: number) => number) =>
  Array.from({ length: n }, (_, i) => q((i + 1 - 0.375) / (n + 0.25)));
const sorted = (v: number[]) => Float64Array.from(v).sort();
const exponential = (p: number) => -Math.log(1 - p);

describe("quantile measures of shape", () => {
  it("Moors' tail weight is 1.233 for the normal and exactly 1 for the uniform", () => {
    const e = (i: number) => normalQuantile(i / 8);
    expect(NORMAL_TAIL_WEIGHT).toBeCloseTo((e(7) - e(5) + e(3) - e(1)) / (e(6) - e(2)), 12);
    expect(NORMAL_TAIL_WEIGHT).toBeCloseTo(1.233, 3);
    // type 7 quantiles of an evenly spaced grid are exact: p itself
    expect(moorsTailWeight(Float64Array.from({ length: 801 }, (_, i) => i / 800))).toBeCloseTo(1, 12);
  });

  it("Kelly's skewness is 0 for a symmetric sample and 0.46497 for exponential quantiles", () => {
    expect(kellySkewness(sorted(blom(1001, normalQuantile)))).toBeCloseTo(0, 12);
    const worked = (Math.log(10) + Math.log(10 / 9) - 2 * Math.log(2)) / (Math.log(10) - Math.log(10 / 9));
    expect(worked).toBeCloseTo(0.46497, 5);
    expect(kellySkewness(sorted(blom(100_001, exponential)))).toBeCloseTo(worked, 4);
  });

  it("standard errors under normality agree with a seeded simulation (2000 samples of 200)", () => {
    let seed = 20261205;
    const uniform = () => {
      // Park–Miller minimal standard generator: reproducible, no dependency
      seed = (seed * 48271) % 2147483647;
      return seed / 2147483647;
    };
    const normal = () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
    const n = 200;
    const kelly: number[] = [];
    const moors: number[] = [];
    for (let r = 0; r < 2000; r++) {
      const s = sorted(Array.from({ length: n }, normal));
      kelly.push(kellySkewness(s));
      moors.push(moorsTailWeight(s));
    }
    const sd = (v: number[]) => {
      const m = v.reduce((a, b) => a + b, 0) / v.length;
      return Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / (v.length - 1));
    };
    const se = quantileMeasureStandardErrors(n);
    expect(sd(kelly) / se.skewness).toBeGreaterThan(0.9);
    expect(sd(kelly) / se.skewness).toBeLessThan(1.1);
    expect(sd(moors) / se.tailWeight).toBeGreaterThan(0.9);
    expect(sd(moors) / se.tailWeight).toBeLessThan(1.1);
  });
});

describe("the Q-Q reading", () => {
  it("reads normal scores as close to normal", () => {
    const r = readQqShape(blom(200, normalQuantile));
    expect(r.reading).toBe("close to normal");
    expect(r.quantileTailWeight).toBeCloseTo(NORMAL_TAIL_WEIGHT, 2);
  });

  it("reads one far residual among normal ones as one extreme residual, not as skewness (skewness about −0.5 with it, about 0 without)", () => {
    const values = blom(422, normalQuantile);
    values[0] = -6.609;
    const r = readQqShape(values);
    expect(r.skewness).toBeLessThan(-0.4);
    expect(Math.abs(r.withoutMostExtreme.skewness)).toBeLessThan(0.05);
    expect(r.withoutMostExtreme.residual).toBe(-6.609);
    expect(r.reading).toBe("one extreme residual");
    expect(r.summary).toMatch(/^One extreme residual \(−6\.61\); otherwise close to normal/);
  });

  it("reads heavy tails with one far residual as heavier tails, saying the skewness comes from that one residual", () => {
    const values = blom(422, (p) => tQuantile(p, 5));
    values[421] = 9;
    const r = readQqShape(values);
    expect(r.skewness).toBeGreaterThan(0.3);
    expect(r.reading).toBe("heavier tails");
    expect(r.summary).toMatch(
      /The skewness of 0\.\d\d comes from one residual \(9\.00\): −?0\.\d\d without it\./,
    );
  });

  it("reads exponential scores as right-skewed and their mirror image as left-skewed, with or without the most extreme", () => {
    const right = readQqShape(blom(200, exponential));
    expect(right.reading).toBe("right-skewed");
    expect(right.quantileSkewness).toBeGreaterThan(0.3);
    expect(readQqShape(blom(200, exponential).map((v) => -v)).reading).toBe("left-skewed");
  });

  it("reads t(3) scores as heavier tails and uniform scores as lighter tails", () => {
    expect(readQqShape(blom(300, (p) => tQuantile(p, 3))).reading).toBe("heavier tails");
    expect(readQqShape(blom(300, (p) => p)).reading).toBe("lighter tails");
  });

  it("says nothing but close to normal for fewer than 8 residuals", () => {
    expect(readQqShape([1, -1, 0.5, 20]).reading).toBe("close to normal");
  });
});
