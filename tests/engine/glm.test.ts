// Generalized linear models: separation is reported, not fitted; bad binary and count responses
// give errors that name the problem; quantile residuals lie inside their intervals and are
// reproducible; overdispersion is read in plain words.
import { describe, expect, it } from "vitest";
import { EngineError, SeparationError, fitModel, type GlmResult } from "~/engine";
import { poissonFamily } from "~/engine/glm/families";
import { quantileResiduals } from "~/engine/glm/quantile-residuals";
import { normalQuantile } from "~/engine/distributions";

function glm(spec: unknown, rows: Record<string, string>[]): GlmResult {
  const r = fitModel(spec, rows);
  if (r.kind !== "glm") throw new Error("expected a GLM");
  return r;
}

function message(fn: () => unknown): string {
  try {
    fn();
  } catch (err) {
    expect(err).toBeInstanceOf(EngineError);
    return (err as Error).message;
  }
  throw new Error("expected an EngineError");
}

// invented: x separates the outcome completely above 5
const separated = Array.from({ length: 20 }, (_, i) => ({
  y: i >= 10 ? "1" : "0",
  x: String(i),
  z: String((i * 7) % 5),
}));
// invented: arm B has only events (quasi-complete separation by a level)
const quasi = Array.from({ length: 30 }, (_, i) => ({
  y: i % 3 === 0 ? "1" : i >= 20 ? "1" : "0",
  arm: i >= 20 ? "B" : "A",
  x: String((i * 13) % 7),
}));

describe("separation (constructed cases)", () => {
  it("complete separation by a continuous covariate is reported, naming the term", () => {
    let err: unknown;
    try {
      glm({ response: "y", family: "binomial", terms: [{ variable: "x" }, { variable: "z" }] }, separated);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(SeparationError);
    const s = err as SeparationError;
    expect(s.kind).toBe("complete");
    expect(s.terms).toContain("x");
    expect(s.message).toMatch(/^complete separation: the estimates for "x"/);
  });
  it("quasi-complete separation by an arm with only events is reported", () => {
    let err: unknown;
    try {
      glm({ response: "y", family: "binomial", terms: [{ variable: "arm" }, { variable: "x" }] }, quasi);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(SeparationError);
    expect((err as SeparationError).kind).toBe("quasi-complete");
    expect((err as SeparationError).terms).toEqual(["arm"]);
  });
});

describe("GLM input errors", () => {
  const rows = [
    { y: "0", c: "3", g: "a", arm: "yes", off: "0.1" },
    { y: "1", c: "0", g: "b", arm: "no", off: "0.2" },
    { y: "1", c: "5", g: "a", arm: "yes", off: "0.3" },
    { y: "0", c: "2", g: "b", arm: "maybe", off: "-Inf" },
    { y: "1", c: "1", g: "a", arm: "no", off: "0.1" },
    { y: "0", c: "4", g: "b", arm: "yes", off: "0.2" },
  ];
  it("a binary response with more than two levels lists them", () => {
    expect(
      message(() => glm({ response: "arm", family: "binomial", terms: [{ variable: "g" }] }, rows)),
    ).toBe('binary response "arm" has more than two levels: maybe, no, yes');
  });
  it("negative or non-integer counts name the row", () => {
    const bad = rows.map((r, i) => (i === 2 ? { ...r, c: "2.5" } : r));
    expect(message(() => glm({ response: "c", family: "poisson", terms: [{ variable: "g" }] }, bad))).toMatch(
      /non-negative integer: data row 3 has 2.5/,
    );
    const neg = rows.map((r, i) => (i === 4 ? { ...r, c: "-1" } : r));
    expect(message(() => glm({ response: "c", family: "poisson", terms: [{ variable: "g" }] }, neg))).toMatch(
      /data row 5 has -1/,
    );
  });
  it("a non-finite offset names the row", () => {
    expect(
      message(() =>
        glm({ response: "c", family: "poisson", terms: [{ variable: "g" }], offset: "off" }, rows),
      ),
    ).toBe('offset column "off" has a non-finite value ("-Inf") at data row 4');
  });
  it("no events or all events", () => {
    const none = rows.map((r) => ({ ...r, y: "0" }));
    expect(
      message(() => glm({ response: "y", family: "binomial", terms: [{ variable: "g" }] }, none)),
    ).toMatch(/has no events/);
    const all = rows.map((r) => ({ ...r, y: "1" }));
    expect(
      message(() => glm({ response: "y", family: "binomial", terms: [{ variable: "g" }] }, all)),
    ).toMatch(/event in every row/);
  });
  it("a two-level text response needs its event level", () => {
    const two = rows.filter((r) => r.arm !== "maybe");
    expect(
      message(() => glm({ response: "arm", family: "binomial", terms: [{ variable: "g" }] }, two)),
    ).toMatch(/name the level counted as the event/);
  });
});

describe("randomized quantile residuals (Dunn and Smyth 1996)", () => {
  it("lie between Φ⁻¹(F(y−1)) and Φ⁻¹(F(y)) and repeat exactly with the fixed seed", () => {
    const y = Float64Array.from([0, 1, 2, 3, 7, 0, 4]);
    const mu = Float64Array.from([0.5, 1.2, 2.2, 2.9, 4.1, 0.3, 3.3]);
    const r = quantileResiduals(y, mu, poissonFamily);
    y.forEach((yi, i) => {
      expect(r[i]).toBeGreaterThanOrEqual(
        normalQuantile(Math.max(1e-300, poissonFamily.cdf(yi - 1, mu[i]))) - 1e-12,
      );
      expect(r[i]).toBeLessThanOrEqual(normalQuantile(poissonFamily.cdf(yi, mu[i])) + 1e-12);
    });
    expect(Array.from(quantileResiduals(y, mu, poissonFamily))).toEqual(Array.from(r));
  });
});

describe("overdispersion in words", () => {
  it("flags counts that vary more than a Poisson model allows", () => {
    // invented: counts with much more spread than their mean
    const counts = [0, 12, 1, 30, 2, 0, 25, 3, 0, 18, 1, 40, 0, 2, 22, 5];
    const rows = counts.map((c, i) => ({ c: String(c), g: i % 2 ? "a" : "b" }));
    const r = glm({ response: "c", family: "poisson", terms: [{ variable: "g" }] }, rows);
    expect(r.checks.overdispersion.reading).toMatch(/^The counts vary about .* as much as/);
    expect(r.checks.overdispersion.ratio).toBeGreaterThan(5);
  });
});

describe("GLM determinism", () => {
  it("gives byte-identical output for the same input (quantile residuals included)", async () => {
    const { stringifyResult } = await import("~/engine");
    const rows = Array.from({ length: 40 }, (_, i) => ({
      c: String((i * 7) % 9),
      g: i % 3 === 0 ? "a" : "b",
      x: String(i / 10),
    }));
    const spec = {
      response: "c",
      family: "negative-binomial",
      terms: [{ variable: "g" }, { variable: "x" }],
      treatment: "g",
    };
    expect(stringifyResult(fitModel(spec, rows))).toBe(stringifyResult(fitModel(spec, rows)));
  });
});
