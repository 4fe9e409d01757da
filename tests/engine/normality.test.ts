// Shapiro–Wilk on small samples (the n = 3 exact branch and the n ≤ 11 branch of AS R94) and the
// other normality tests' guards. Reference: R 4.2.2 shapiro.test, values typed in.
import { describe, expect, it } from "vitest";
import { andersonDarling, lilliefors, shapiroWilk } from "~/engine/normality";

const CASES: { x: number[]; w: number; p: number }[] = [
  {
    x: [148, 154, 158, 160, 161, 162, 166, 170, 182, 195, 236],
    w: 0.78881469483538735,
    p: 0.0067038140565029254,
  },
  { x: [2.1, 3.4, 1.9, 5.6, 4.4], w: 0.93208493960152361, p: 0.61065590505509537 },
  { x: [1, 2, 4], w: 0.96428571428571419, p: 0.6368868450289632 },
  {
    x: [3.1, 2.2, 8.9, 4.4, 5.0, 6.1, 2.8, 3.3, 9.9, 1.2, 4.7, 5.5, 6.6, 3.9],
    w: 0.95280759346977595,
    p: 0.60508423647251919,
  },
];

describe("Shapiro–Wilk, AS R94 (reference: R shapiro.test)", () => {
  it.each(CASES.map((c) => [c.x.length, c] as const))("n = %i", (_n, c) => {
    const t = shapiroWilk(c.x);
    expect(Math.abs((t.statistic as number) - c.w) / c.w).toBeLessThan(1e-8);
    expect(Math.abs((t.p as number) - c.p) / c.p).toBeLessThan(1e-6);
  });
  it("is not computed outside 3 ≤ n ≤ 5000, with the reason", () => {
    expect(shapiroWilk([1, 2]).statistic).toBeNull();
    expect(shapiroWilk([1, 2]).reason).toMatch(/at least 3/);
    const big = Array.from({ length: 5001 }, (_, i) => Math.sin(i));
    expect(shapiroWilk(big).reason).toMatch(/at most 5000/);
  });
  it("the other tests state their minimum sizes", () => {
    expect(andersonDarling([1, 2, 3]).reason).toMatch(/at least 8/);
    expect(lilliefors([1, 2, 3]).reason).toMatch(/at least 5/);
  });
});
