// Distribution functions against R 4.2.2 (pt, pf, pchisq, pnorm, qt, qnorm), values printed by R
// with options(digits = 17) and typed in here.
import { describe, expect, it } from "vitest";
import {
  chiSquareUpper,
  fUpper,
  normalCdf,
  normalQuantile,
  tCdf,
  tQuantile,
  tTwoSided,
} from "~/engine/distributions";

function rel(a: number, b: number): number {
  return Math.abs(a - b) / Math.abs(b);
}

describe("distribution functions (reference: R 4.2.2)", () => {
  it("t tails, including tiny p", () => {
    expect(rel(tTwoSided(-12, 5) / 2, 3.5447462585807639e-5)).toBeLessThan(1e-10);
    expect(rel(tCdf(0.3, 2), 0.60375716957991121)).toBeLessThan(1e-12);
  });
  it("F upper tail where 1 − cdf would vanish: pf(200, 3, 40, lower = FALSE)", () => {
    expect(rel(fUpper(200, 3, 40), 4.1233824781651446e-24)).toBeLessThan(1e-9);
  });
  it("chi-square upper tail: pchisq(300, 4) = 1.08e-63, pchisq(3.2, 7) = 0.866", () => {
    expect(rel(chiSquareUpper(300, 4), 1.083439491947826e-63)).toBeLessThan(1e-10);
    expect(rel(chiSquareUpper(3.2, 7), 0.86590474173609833)).toBeLessThan(1e-12);
  });
  it("normal far tail: pnorm(-30) = 4.9e-198", () => {
    expect(rel(normalCdf(-30), 4.9067139271481872e-198)).toBeLessThan(1e-10);
  });
  it("quantiles: qt(0.975, 7), qt(0.995, 3), qnorm(1e-10)", () => {
    expect(rel(tQuantile(0.975, 7), 2.3646242515927844)).toBeLessThan(1e-13);
    expect(rel(tQuantile(0.995, 3), 5.8409093097333544)).toBeLessThan(1e-13);
    expect(rel(normalQuantile(1e-10), -6.3613409024040557)).toBeLessThan(1e-14);
  });
});
