// Hand-checkable invariants of the fit and its diagnostics (no outside reference needed):
// leverages sum to the rank and lie in [1/n, 1]; deletion quantities equal explicit
// leave-one-out refits (Belsley, Kuh and Welsch 1980, section 2.1); Q has orthonormal columns
// and QR = X; the output is byte-identical across runs.
import { describe, expect, it } from "vitest";
import { fitLinear as fitModel, stringifyResult, toCliResult } from "~/engine";
import { formThinQ, householderQR, upperR } from "~/engine/qr";

// small invented data set (fixed numbers)
const rows = [
  { y: "12.1", x: "1.0", g: "a", z: "3.2" },
  { y: "14.0", x: "2.0", g: "b", z: "1.1" },
  { y: "15.2", x: "2.5", g: "a", z: "4.4" },
  { y: "19.9", x: "4.0", g: "c", z: "2.0" },
  { y: "18.1", x: "3.5", g: "b", z: "5.1" },
  { y: "24.0", x: "6.0", g: "c", z: "0.5" },
  { y: "21.7", x: "5.0", g: "a", z: "3.9" },
  { y: "27.5", x: "7.5", g: "b", z: "2.7" },
  { y: "25.3", x: "6.5", g: "c", z: "6.0" },
  { y: "31.0", x: "9.0", g: "a", z: "1.8" },
  { y: "29.2", x: "8.0", g: "b", z: "4.9" },
  { y: "36.8", x: "10.0", g: "c", z: "3.3" },
];
const spec = { response: "y", terms: [{ variable: "x" }, { variable: "g" }, { variable: "z" }] };

describe("invariants of the linear fit", () => {
  const result = fitModel(spec, rows);
  const o = result.observations;
  const n = result.n;

  it("leverages sum to the rank and lie in [1/n, 1]", () => {
    const sum = o.leverage.reduce((s, h) => s + h, 0);
    expect(sum).toBeCloseTo(result.rank, 12);
    for (const h of o.leverage) {
      expect(h).toBeGreaterThanOrEqual(1 / n - 1e-15);
      expect(h).toBeLessThanOrEqual(1);
    }
  });

  it("deletion residuals, DFFITS, DFBETAS and Cook's distance equal explicit leave-one-out refits", () => {
    const p = result.rank;
    const sigma = result.fit.sigma;
    for (let i = 0; i < n; i++) {
      const loo = fitModel(
        spec,
        rows.filter((_, k) => k !== i),
      );
      const sigmaI = loo.fit.sigma;
      // prediction of the left-out row from the refit
      const x = Number(rows[i].x);
      const z = Number(rows[i].z);
      const coef = Object.fromEntries(loo.coefficients.map((c) => [c.name, c.estimate]));
      const predI = coef.Intercept + coef.x * x + coef.z * z + (coef[`g: ${rows[i].g}`] ?? 0);
      const h = o.leverage[i];
      const e = o.residual[i];
      expect(o.studentizedExternal[i]).toBeCloseTo(e / (sigmaI * Math.sqrt(1 - h)), 10);
      expect(o.dffits[i]).toBeCloseTo((o.fitted[i] - predI) / (sigmaI * Math.sqrt(h)), 10);
      result.coefficients.forEach((c, j) => {
        const seJ = c.se / sigma; // √((X'X)⁻¹)ⱼⱼ
        expect(o.dfbetas[j][i]).toBeCloseTo((c.estimate - loo.coefficients[j].estimate) / (sigmaI * seJ), 10);
      });
      // Cook's distance: ‖X(b − b₍ᵢ₎)‖² / (p σ̂²)
      let ss = 0;
      for (let k = 0; k < n; k++) {
        const r = rows[k];
        const pred = coef.Intercept + coef.x * Number(r.x) + coef.z * Number(r.z) + (coef[`g: ${r.g}`] ?? 0);
        ss += (o.fitted[k] - pred) ** 2;
      }
      expect(o.cooksDistance[i]).toBeCloseTo(ss / (p * sigma * sigma), 10);
    }
  });

  it("is deterministic: the same input gives byte-identical output", () => {
    const again = fitModel(spec, rows);
    expect(stringifyResult(toCliResult(again))).toBe(stringifyResult(toCliResult(result)));
    expect(stringifyResult(again)).toBe(stringifyResult(result));
  });

  it("carries the caution", () => {
    expect(result.caution).toBe(
      "Results support, but do not replace, qualified statistical and medical review.",
    );
  });
});

describe("Householder QR", () => {
  it("Q has orthonormal columns and QR reproduces X", () => {
    const n = 40;
    const p = 6;
    const x = new Float64Array(n * p);
    for (let k = 0; k < x.length; k++) x[k] = Math.sin(k * 1.7) * 10 + (k % 7);
    const f = householderQR(x, n, p);
    const r = upperR(f);
    const q = formThinQ(f);
    for (let a = 0; a < p; a++) {
      for (let b = 0; b < p; b++) {
        let s = 0;
        for (let i = 0; i < n; i++) s += q[a * n + i] * q[b * n + i];
        expect(s).toBeCloseTo(a === b ? 1 : 0, 13);
      }
    }
    for (let j = 0; j < p; j++) {
      for (let i = 0; i < n; i++) {
        let s = 0;
        for (let k = 0; k <= j; k++) s += q[k * n + i] * r[j * p + k];
        expect(s).toBeCloseTo(x[j * n + i], 11);
      }
    }
  });

  it("sets aside a column that is a combination of earlier ones", () => {
    const n = 10;
    const x = new Float64Array(n * 3);
    for (let i = 0; i < n; i++) {
      x[i] = 1;
      x[n + i] = i;
      x[2 * n + i] = 2 + 3 * i;
    }
    const f = householderQR(x, n, 3);
    expect(f.rank).toBe(2);
    expect(f.aliased).toEqual([2]);
  });
});

describe("large-data mode (design storage reused for Q)", () => {
  it("gives the same fit, diagnostics and partial residuals as the standard mode", async () => {
    const { leastSquares, observationDiagnostics, partialResiduals, partialResidualsFromQR } =
      await import("~/engine");
    const n = 300;
    const p = 5;
    const x = new Float64Array(n * p);
    const y = new Float64Array(n);
    const w = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = 1;
      for (let j = 1; j < p; j++) x[j * n + i] = Math.sin(i * (j + 0.3)) * j + Math.cos(i * 0.01 * j);
      y[i] = 1 + x[n + i] - 0.5 * x[2 * n + i] + Math.sin(i * 7.7);
      w[i] = 1 + (i % 3);
    }
    const terms = [[1], [2, 3], [4]];
    const standard = leastSquares({ x, n, p, y, weights: w });
    const lean = leastSquares({ x: new Float64Array(x), n, p, y, weights: w }, undefined, {
      overwriteDesign: true,
    });
    if (!standard.ok || !lean.ok) throw new Error("aliased");
    const a = observationDiagnostics(standard.fit);
    const b = observationDiagnostics(lean.fit);
    const pa = partialResiduals(x, n, terms, standard.fit.coefficients, standard.fit.residuals);
    const pb = partialResidualsFromQR(lean.fit, terms);
    for (let j = 0; j < p; j++)
      expect(lean.fit.coefficients[j]).toBeCloseTo(standard.fit.coefficients[j], 11);
    for (let i = 0; i < n; i++) {
      expect(b.leverage[i]).toBeCloseTo(a.leverage[i], 12);
      expect(b.cooksDistance[i]).toBeCloseTo(a.cooksDistance[i], 11);
      expect(lean.fit.fitted[i]).toBeCloseTo(standard.fit.fitted[i], 10);
      for (let t = 0; t < terms.length; t++) expect(pb[t][i]).toBeCloseTo(pa[t][i], 10);
    }
  });
});
