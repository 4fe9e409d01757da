// Tail probabilities over the whole double range against R's pt, pf, pchisq and pnorm with
// lower.tail = FALSE (tests/reference/distributions.R), each value also recomputed at 50 digits
// with mpmath (tests/reference/distributions-mpmath.py). Where R and mpmath part by more than
// 1e-13 relative, mpmath settles it; the engine must agree to 1e-12 relative, from p ≈ 0.5 down
// to 1e-300 (the old tails were one minus a number near one and gave 0 below about 1e-16).
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import {
  chiSquareUpper,
  fUpper,
  normalCdf,
  normalUpper,
  tCdf,
  tTwoSided,
  tUpper,
} from "~/engine/distributions";

interface Case {
  r: number;
  mp: number;
}
interface Tails {
  source: string;
  t: (Case & { t: number; df: number })[];
  f: (Case & { f: number; df1: number; df2: number })[];
  chisq: (Case & { x: number; df: number })[];
  normal: (Case & { z: number })[];
}

const tails = JSON.parse(readFileSync("tests/reference/tails/distribution-tails.json", "utf8")) as Tails;
const TOLERANCE = 1e-12;

function rel(a: number, b: number): number {
  return Math.abs(a - b) / Math.abs(b);
}
/** R's value where it agrees with the 50-digit one, else the 50-digit one. */
function reference(c: Case): number {
  return rel(c.r, c.mp) <= 1e-13 ? c.r : c.mp;
}
function worst<T extends Case>(cases: T[], engine: (c: T) => number): { error: number; at: T | null } {
  let error = 0;
  let at: T | null = null;
  for (const c of cases) {
    const e = rel(engine(c), reference(c));
    if (!(e <= error)) {
      error = e;
      at = c;
    }
  }
  return { error, at };
}

describe(`tail probabilities (reference: ${tails.source}; mpmath at 50 digits)`, () => {
  it("covers p down to 1e-300", () => {
    const smallest = Math.min(...tails.t.map((c) => c.r), ...tails.f.map((c) => c.r));
    expect(smallest).toBeLessThan(1e-250);
  });
  it("pt(t, df, lower.tail = FALSE), two-sided and lower tails", () => {
    const up = worst(tails.t, (c) => tUpper(c.t, c.df));
    expect(up.error, JSON.stringify(up.at)).toBeLessThan(TOLERANCE);
    const two = worst(tails.t, (c) => tTwoSided(-c.t, c.df) / 2);
    expect(two.error, JSON.stringify(two.at)).toBeLessThan(TOLERANCE);
    const low = worst(tails.t, (c) => tCdf(-c.t, c.df));
    expect(low.error, JSON.stringify(low.at)).toBeLessThan(TOLERANCE);
  });
  it("pf(f, df1, df2, lower.tail = FALSE)", () => {
    const w = worst(tails.f, (c) => fUpper(c.f, c.df1, c.df2));
    expect(w.error, JSON.stringify(w.at)).toBeLessThan(TOLERANCE);
  });
  it("pchisq(x, df, lower.tail = FALSE)", () => {
    const w = worst(tails.chisq, (c) => chiSquareUpper(c.x, c.df));
    expect(w.error, JSON.stringify(w.at)).toBeLessThan(TOLERANCE);
  });
  it("pnorm(z, lower.tail = FALSE) and pnorm(-z)", () => {
    const w = worst(tails.normal, (c) => normalUpper(c.z));
    expect(w.error, JSON.stringify(w.at)).toBeLessThan(TOLERANCE);
    const l = worst(tails.normal, (c) => normalCdf(-c.z));
    expect(l.error, JSON.stringify(l.at)).toBeLessThan(TOLERANCE);
  });
});
