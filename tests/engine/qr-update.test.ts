// Columns appended to a fitted model's factorization (app/engine/qr-update.ts) against a full
// refit of the larger design (residualSumOfSquares, Householder QR of [X Z]), and the homogeneity
// of slopes test it serves against R's anova of the nested lm fits (values made by
// tests/reference/generate.R: anova(lm(chg ~ arm + base + age + sex), the model plus arm:base,
// arm:age, and both); data tests/reference/data/trial-ancova.csv, invented and seeded).
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { fitLinear } from "~/engine";
import { leastSquares, residualSumOfSquares } from "~/engine/least-squares";
import { appendColumns } from "~/engine/qr-update";
import { readCsvText } from "~/engine-io/read-csv";

const REF = join(import.meta.dirname, "..", "reference");

/** A seeded linear congruential sequence in (0, 1): invented data, the same on every run. */
function uniform(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return (s + 0.5) / 4294967296;
  };
}

function design(n: number, p: number, next: () => number): Float64Array {
  const x = new Float64Array(n * p);
  for (let i = 0; i < n; i++) x[i] = 1;
  for (let j = 1; j < p; j++) for (let i = 0; i < n; i++) x[j * n + i] = next() * 10 - 5;
  return x;
}

describe("columns appended to a fitted factorization", () => {
  for (const weighted of [false, true]) {
    it(`give the residual sum of squares and rank of a full refit (${weighted ? "weighted" : "unweighted"})`, () => {
      const next = uniform(weighted ? 11 : 7);
      const n = 400;
      const p = 6;
      const x = design(n, p, next);
      const y = Float64Array.from(
        { length: n },
        (_, i) => x[n + i] * 0.5 - x[2 * n + i] + x[n + i] * x[3 * n + i] * 0.2 + next(),
      );
      const weights = weighted ? Float64Array.from({ length: n }, () => 0.5 + next()) : null;
      const outcome = leastSquares({ x, n, p, y, weights });
      if (!outcome.ok) throw new Error("the test design is aliased");
      // added: an interaction, a square, and a column aliased with the design (2·x1 − x2)
      const k = 3;
      const z = new Float64Array(n * k);
      for (let i = 0; i < n; i++) {
        z[i] = x[n + i] * x[3 * n + i];
        z[n + i] = x[2 * n + i] ** 2;
        z[2 * n + i] = 2 * x[n + i] - x[2 * n + i];
      }
      const full = new Float64Array(n * (p + k));
      full.set(x);
      full.set(z, n * p);
      const refit = residualSumOfSquares({ x: full, n, p: p + k, y, weights });
      const appended = appendColumns(outcome.fit, new Float64Array(z), k);
      expect(appended.rank).toBe(refit.rank);
      expect(appended.rank).toBe(p + 2);
      expect(Math.abs(appended.rss - refit.rss) / refit.rss).toBeLessThan(1e-10);
    });
  }

  it("give R's anova F tests of homogeneity of slopes (trial-ancova)", () => {
    const table = readCsvText(readFileSync(join(REF, "data", "trial-ancova.csv"), "utf8"));
    const spec = JSON.parse(readFileSync(join(REF, "models", "trial-ancova.json"), "utf8")) as unknown;
    const r = JSON.parse(readFileSync(join(REF, "values", "trial-ancova.json"), "utf8")) as {
      tests: {
        homogeneityOfSlopes: {
          statistic: number;
          df1: number;
          df2: number;
          p: number;
          byCovariate: { covariate: string; statistic: number; df1: number; df2: number; p: number }[];
        };
      };
    };
    const hos = fitLinear(spec, table).tests.homogeneityOfSlopes;
    const expected = r.tests.homogeneityOfSlopes;
    expect(hos?.df1).toBe(expected.df1);
    expect(hos?.df2).toBe(expected.df2);
    expect(Math.abs((hos?.statistic as number) / expected.statistic - 1)).toBeLessThan(1e-8);
    expect(Math.abs((hos?.p as number) / expected.p - 1)).toBeLessThan(1e-6);
    expected.byCovariate.forEach((b, i) => {
      const mine = hos?.byCovariate[i];
      expect(mine?.covariate).toBe(b.covariate);
      expect(mine?.df1).toBe(b.df1);
      expect(mine?.df2).toBe(b.df2);
      expect(Math.abs((mine?.statistic as number) / b.statistic - 1)).toBeLessThan(1e-8);
      expect(Math.abs((mine?.p as number) / b.p - 1)).toBeLessThan(1e-6);
    });
  });

  it("give the same result from typed columns as from cell text", () => {
    const table = readCsvText(readFileSync(join(REF, "data", "trial-ancova.csv"), "utf8"));
    const spec = JSON.parse(readFileSync(join(REF, "models", "trial-ancova.json"), "utf8")) as unknown;
    const typed = {
      columns: Object.fromEntries(
        Object.entries(table.columns).map(([name, cells]) => [
          name,
          cells.every((c) => c === "" || Number.isFinite(Number(c)))
            ? Float64Array.from(cells, (c) => (c === "" ? Number.NaN : Number(c)))
            : cells.map((c) => (c === "" ? null : c)),
        ]),
      ),
    };
    expect(JSON.stringify(fitLinear(spec, typed))).toBe(JSON.stringify(fitLinear(spec, table)));
  });
});
