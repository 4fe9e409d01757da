// The figures' loess smoother (app/engine/loess.ts) against R's lowess (Cleveland 1979), which
// also interpolates between fitted vertices. Values printed by R 4.2.2:
//   x <- 1:60; y <- 10*sin(x/8) + ((x*37) %% 11 - 5); y[30] <- 40
//   lowess(x, y, f = 0.5, iter = 2)$y[c(1, 10, 20, 30, 40, 50, 60)]
import { describe, expect, it } from "vitest";
import { loessCurve } from "~/engine/loess";

describe("loess smoother", () => {
  const x = Array.from({ length: 60 }, (_, i) => i + 1);
  const y = x.map((v) => 10 * Math.sin(v / 8) + (((v * 37) % 11) - 5));
  y[29] = 40;
  const R = [5.631273, 6.921542, 4.381643, -4.48942, -7.383043, 0.078789, 10.122288];
  const at = [1, 10, 20, 30, 40, 50, 60];

  it("agrees with R's lowess (f = 0.5, two robustness iterations) when evaluated at the data", () => {
    // a grid of 60 points over 1..60 is the data's own x values
    const curve = loessCurve(x, y, 0.5, 60, 2);
    expect(curve).toHaveLength(60);
    at.forEach((xi, k) => {
      const p = curve[xi - 1];
      expect(p.x).toBeCloseTo(xi, 10);
      // window ties and R's delta interpolation differ slightly: 2% of the response range
      expect(Math.abs(p.y - R[k])).toBeLessThan(0.02 * 25);
    });
  });

  it("is robust to the planted outlier and ignores non-finite pairs", () => {
    const curve = loessCurve([...x, NaN], [...y, 3], 0.5, 30);
    const near30 = curve.reduce((a, b) => (Math.abs(b.x - 30) < Math.abs(a.x - 30) ? b : a));
    expect(Math.abs(near30.y)).toBeLessThan(8);
    expect(loessCurve([1, 2], [1, 2])).toEqual([]);
  });
});
