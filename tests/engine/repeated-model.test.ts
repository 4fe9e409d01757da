// The repeated-measures engine's own behaviour beyond the nlme comparison
// (tests/reference/repeated-reference.test.ts): the fallback list, the exactness of the subject
// influence (against a refit without the subject at the same covariance), the likelihood-ratio
// test of the structure against unstructured (R's logLik values from the reference files), the
// residual-df option, the tests' numerator df, counts and residual summaries per visit and arm,
// the likelihood's sums by visit pattern against subject by subject, determinism, visit order
// and input errors.
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { readCsvText } from "~/engine-io/read-csv";
import { EngineError } from "~/engine/errors";
import { cellText, selectRows, toDataTable, type ColumnTable } from "~/engine/data";
import { fitRepeatedModel } from "~/engine/repeated/repeated-model";
import { evaluateLikelihood } from "~/engine/repeated/likelihood";
import { prepareRepeatedData } from "~/engine/repeated/repeated-data";
import { parseRepeatedSpec } from "~/engine/repeated/repeated-spec";
import { chiSquareUpper } from "~/engine/distributions";

const REF = join(import.meta.dirname, "..", "reference", "repeated");
const trial = readCsvText(readFileSync(join(REF, "data", "trial.csv"), "utf8"));
const orthodont = readCsvText(readFileSync(join(REF, "data", "orthodont.csv"), "utf8"));
const model = (name: string) =>
  JSON.parse(readFileSync(join(REF, "models", `${name}.json`), "utf8")) as Record<string, unknown> & {
    repeated: Record<string, unknown>;
  };
const values = (name: string) =>
  JSON.parse(readFileSync(join(REF, "values", `${name}.json`), "utf8")) as { logLik: number };

function withRepeated(name: string, changes: Record<string, unknown>) {
  const m = model(name);
  return { ...m, repeated: { ...m.repeated, ...changes } };
}

/** Keeps only some rows of a column table. */
function filterRows(table: ColumnTable, keep: (row: Record<string, string>) => boolean): ColumnTable {
  const names = Object.keys(table.columns);
  const n = table.columns[names[0]].length;
  const idx: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Object.fromEntries(names.map((c) => [c, cellText(table.columns[c], i)]));
    if (keep(row)) idx.push(i);
  }
  return { columns: Object.fromEntries(names.map((c) => [c, selectRows(table.columns[c], idx)])) };
}

describe("fallback structures", () => {
  // visits 2 and 8 are never observed in one subject: their covariance (unstructured) and the
  // lag-2 correlation (Toeplitz) are not estimable; AR(1) ties lag 2 to lag 1
  const early = filterRows(
    trial,
    (r) =>
      ["Week 2", "Week 4", "Week 8"].includes(r.AVISIT) &&
      (Number(r.USUBJID.slice(2)) % 2 === 1 ? r.AVISIT !== "Week 8" : r.AVISIT !== "Week 2"),
  );
  const spec = {
    response: "CHG",
    terms: [{ variable: "ARM", reference: "Placebo" }, { variable: "AVISIT" }, { variable: "BASE" }],
    treatment: "ARM",
    repeated: {
      subject: "USUBJID",
      visit: "AVISIT",
      visitOrder: "AVISITN",
      covariance: "unstructured",
      fallback: ["toeplitz", "ar1"],
    },
  };

  it("uses the first fallback that converges and says why the others were not used", () => {
    const r = fitRepeatedModel(spec, early);
    expect(r.covariance.planned).toBe("unstructured");
    expect(r.covariance.structure).toBe("ar1");
    expect(r.covariance.attempts.map((a) => a.structure)).toEqual(["unstructured", "toeplitz", "ar1"]);
    expect(r.covariance.attempts[0].reason).toMatch(/not estimable|converge|increase/);
    expect(r.covariance.attempts[1].reason).toMatch(/not estimable|converge|increase/);
    expect(r.covariance.attempts[2].reason).toBeNull();
    expect(r.structureTest?.statistic).toBeNull();
    expect(r.structureTest?.reason).toMatch(/unstructured fit did not succeed/);
  });

  it("names every attempt when none converges", () => {
    expect(() =>
      fitRepeatedModel({ ...spec, repeated: { ...spec.repeated, fallback: ["toeplitz"] } }, early),
    ).toThrow(/no covariance structure could be fitted: unstructured \(.+\); toeplitz \(.+\)/);
  });
});

describe("structure test against unstructured", () => {
  it("is the likelihood ratio of the two REML fits (R's logLik values)", () => {
    const r = fitRepeatedModel(model("trial-ar1-reml"), trial);
    const expected = 2 * (values("trial-unstructured-reml").logLik - values("trial-ar1-reml").logLik);
    expect(r.structureTest?.df).toBe(15 - 2);
    expect(Math.abs((r.structureTest?.statistic as number) - expected)).toBeLessThan(1e-5 * expected);
    expect(r.structureTest?.p).toBeCloseTo(chiSquareUpper(expected, 13), 8);
  });
});

describe("subject influence", () => {
  it("equals β̂ refitted without the subject at the same covariance (exact deletion)", () => {
    const spec = model("trial-unstructured-reml");
    const r = fitRepeatedModel(spec, trial);
    const rd = prepareRepeatedData(parseRepeatedSpec(spec), toDataTable(trial));
    const sigma = Float64Array.from(r.covariance.matrix.flat());
    const beta = Float64Array.from(r.coefficients.map((c) => c.estimate));
    const primary = r.adjustedMeans?.contrasts.filter((c) => c.visit === r.influence.primaryVisit) ?? [];
    expect(r.influence.primaryVisit).toBe("Week 16");
    expect(primary.map((c) => c.label)).toEqual(r.influence.contrasts);
    const p = beta.length;
    const a = r.coefficientCovariance;
    for (const s of [0, 7, 63]) {
      const subjects = rd.subjects.filter((_, i) => i !== s);
      const without = evaluateLikelihood(
        { t: 5, n: rd.design.n, p, x: rd.design.x, y: rd.data.response, subjects, method: "reml" },
        sigma,
        false,
      );
      const d = without.beta.map((v, j) => v - beta[j]);
      // Cook's distance uses X'V⁻¹X, the inverse of the full-data coefficient covariance
      const dc =
        numericInverse(a).reduce((acc, row, i) => acc + row.reduce((x, v, j) => x + d[i] * v * d[j], 0), 0) /
        p;
      expect(r.subjects[s].cooksDistance).toBeCloseTo(dc, 8);
      // change in the contrast "Dose 10 mg vs Placebo" at the primary visit: the mean difference's
      // coefficients are the arm and arm-by-visit columns at Week 16
      const change = r.subjects[s].treatmentChange[0];
      const names = r.coefficients.map((c) => c.name);
      const l: number[] = names.map((nm) =>
        nm === "ARM: Dose 10 mg" || nm === "ARM: Dose 10 mg × AVISIT: Week 16" ? 1 : 0,
      );
      const expected = l.reduce((acc, v, j) => acc + v * d[j], 0);
      expect(change).toBeCloseTo(expected, 8);
    }
  });
});

function numericInverse(m: number[][]): number[][] {
  const n = m.length;
  const a = m.map((row, i) => [...row, ...Array.from({ length: n }, (_, j) => (i === j ? 1 : 0))]);
  for (let c = 0; c < n; c++) {
    let piv = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(a[r][c]) > Math.abs(a[piv][c])) piv = r;
    [a[c], a[piv]] = [a[piv], a[c]];
    const d = a[c][c];
    for (let j = 0; j < 2 * n; j++) a[c][j] /= d;
    for (let r = 0; r < n; r++) {
      if (r === c) continue;
      const f = a[r][c];
      for (let j = 0; j < 2 * n; j++) a[r][j] -= f * a[c][j];
    }
  }
  return a.map((row) => row.slice(n));
}

describe("degrees of freedom and tests", () => {
  it("residual df gives N − p everywhere", () => {
    const r = fitRepeatedModel(withRepeated("orthodont-unstructured-reml", { df: "residual" }), orthodont);
    expect(new Set(r.coefficients.map((c) => c.df))).toEqual(new Set([108 - 8]));
    expect(r.tests.treatmentByVisit?.denominatorDf).toBe(100);
  });

  it("the overall treatment test has one numerator df with two arms, treatment by visit one per later visit", () => {
    const r = fitRepeatedModel(model("orthodont-unstructured-reml"), orthodont);
    const t = r.tests.treatment;
    expect(t?.numeratorDf).toBe(1);
    const contrasts = r.adjustedMeans?.contrasts ?? [];
    const avg = contrasts.reduce((s, c) => s + c.estimate, 0) / contrasts.length;
    expect(avg).not.toBe(0);
    expect(t?.statistic).toBeGreaterThan(0);
    expect(r.tests.treatmentByVisit?.numeratorDf).toBe(3);
    expect(r.tests.treatmentByVisit?.denominatorDf).toBeGreaterThan(2);
  });

  it("counts subjects per visit and arm", () => {
    const r = fitRepeatedModel(model("trial-unstructured-reml"), trial);
    const total = r.counts.reduce((s, c) => s + c.subjects, 0);
    expect(total).toBe(r.n);
    expect(r.counts.filter((c) => c.visit === "Week 2").map((c) => c.subjects)).toEqual([40, 40, 40]);
  });
});

describe("input errors", () => {
  it("names a subject with two records at one visit", () => {
    const dup = { columns: { ...trial.columns } };
    const cols = Object.fromEntries(Object.entries(dup.columns).map(([k, v]) => [k, [...v, v[0]]]));
    expect(() => fitRepeatedModel(model("trial-unstructured-reml"), { columns: cols })).toThrow(
      /subject "S-001" has two records at visit "Week 2" \(data rows 1 and \d+\)/,
    );
  });
  it("asks for the visit as a main term", () => {
    const m = model("trial-unstructured-reml");
    expect(() =>
      fitRepeatedModel({ ...m, terms: [{ variable: "ARM" }, { variable: "BASE" }] }, trial),
    ).toThrow(/visit column "AVISIT" must also be a main term/);
  });
  it("asks for REML with Kenward–Roger", () => {
    expect(() =>
      fitRepeatedModel(withRepeated("trial-unstructured-ml", { df: "kenward-roger" }), trial),
    ).toThrow(EngineError);
    expect(() =>
      fitRepeatedModel(withRepeated("trial-unstructured-ml", { df: "kenward-roger" }), trial),
    ).toThrow(/need a REML fit/);
  });
});

describe("likelihood sums", () => {
  it("sums by visit pattern give the subject-by-subject value, β̂ and gradient", () => {
    const spec = model("trial-unstructured-reml");
    const rd = prepareRepeatedData(parseRepeatedSpec(spec), toDataTable(trial));
    const sigma = Float64Array.from(fitRepeatedModel(spec, trial).covariance.matrix.flat());
    for (const method of ["reml", "ml"] as const) {
      const base = {
        t: 5,
        n: rd.design.n,
        p: rd.design.p,
        x: rd.design.x,
        y: rd.data.response,
        subjects: rd.subjects,
        method,
      };
      // a slightly different Σ, so the gradient is not near zero
      const s2 = sigma.map((v, i) => v * (i % 6 === 0 ? 1.1 : 1));
      const grouped = evaluateLikelihood(base, s2, true);
      const single = evaluateLikelihood({ ...base, groupSums: false }, s2, true);
      expect(Math.abs(grouped.logLik - single.logLik)).toBeLessThan(1e-9 * Math.abs(single.logLik));
      grouped.beta.forEach((b, j) =>
        expect(Math.abs(b - single.beta[j])).toBeLessThan(1e-9 * (1 + Math.abs(b))),
      );
      const g1 = grouped.gradientSigma as Float64Array;
      const g2 = single.gradientSigma as Float64Array;
      const scale = Math.max(...Array.from(g2, Math.abs));
      g1.forEach((v, i) => expect(Math.abs(v - g2[i])).toBeLessThan(1e-9 * scale));
    }
  });
});

describe("normalized residuals by visit and arm", () => {
  it("summarize the per-record values of each cell", () => {
    const r = fitRepeatedModel(model("trial-unstructured-reml"), trial);
    const o = r.observations;
    for (const cell of r.residualsByCell) {
      const values = o.normalizedResidual.filter(
        (_, i) => o.visit[i] === cell.visit && trial.columns.ARM[o.row[i] - 1] === cell.level,
      );
      expect(cell.records).toBe(values.length);
      const mean = values.reduce((s, v) => s + v, 0) / values.length;
      expect(cell.mean).toBeCloseTo(mean, 12);
      expect(cell.sd).toBeCloseTo(
        Math.sqrt(values.reduce((s, v) => s + (v - mean) ** 2, 0) / (values.length - 1)),
        12,
      );
    }
    expect(r.residualsByCell.length).toBe(15);
  });
});

describe("determinism and visit order", () => {
  it("gives byte-identical JSON for the same input", async () => {
    const { toRepeatedCliResult } = await import("~/engine/repeated/repeated-result");
    const { stringifyResult } = await import("~/engine/cli-result");
    const a = stringifyResult(toRepeatedCliResult(fitRepeatedModel(model("orthodont-ar1-reml"), orthodont)));
    const b = stringifyResult(toRepeatedCliResult(fitRepeatedModel(model("orthodont-ar1-reml"), orthodont)));
    expect(a).toBe(b);
  });

  it("orders visits by the order column, and names a visit with two order values", () => {
    const r = fitRepeatedModel(model("trial-ar1-reml"), trial);
    expect(r.covariance.visits).toEqual(["Week 2", "Week 4", "Week 8", "Week 12", "Week 16"]);
    const cols = {
      ...trial.columns,
      AVISITN: trial.columns.AVISITN.map((v, i) => (i === 6 && v === "4" ? "5" : v)),
    };
    expect(trial.columns.AVISITN[6]).toBe("4");
    expect(() => fitRepeatedModel(model("trial-ar1-reml"), { columns: cols })).toThrow(
      /visit "Week 4" has two values of "AVISITN" \(4 and 5; data row 7\)/,
    );
  });
});

describe("multiplicity of the contrasts by visit", () => {
  // Holm (1979) and Bonferroni written out by hand for the comparisons at one visit: sort the m
  // p-values, multiply the k-th smallest by m − k + 1, carry the running maximum, cap at 1
  const holm = (p: number[]): number[] => {
    const order = p.map((_, i) => i).sort((a, b) => p[a] - p[b]);
    const out = new Array<number>(p.length);
    let running = 0;
    order.forEach((i, k) => {
      running = Math.max(running, Math.min(1, (p.length - k) * p[i]));
      out[i] = running;
    });
    return out;
  };

  it("adjusts the planned set within each visit, and leaves the other set unadjusted", () => {
    const reference = fitRepeatedModel({ ...model("trial-unstructured-reml"), multiplicity: "holm" }, trial);
    const am = reference.adjustedMeans!;
    for (const visit of new Set(am.contrasts.map((c) => c.visit))) {
      const at = am.contrasts.filter((c) => c.visit === visit);
      expect(at.length).toBe(2);
      const expected = holm(at.map((c) => c.p));
      at.forEach((c, k) => expect(c.pAdjusted, `${c.label} at ${visit}`).toBeCloseTo(expected[k], 14));
    }
    expect(am.pairwise.every((c) => c.pAdjusted === undefined)).toBe(true);

    const pairwise = fitRepeatedModel(
      { ...model("trial-unstructured-reml"), contrasts: "pairwise", multiplicity: "bonferroni" },
      trial,
    ).adjustedMeans!;
    // every pair of the three arms at a visit: the two against the reference and the one between the doses
    for (const c of [...pairwise.contrasts, ...pairwise.pairwise])
      expect(c.pAdjusted, `${c.label} at ${c.visit}`).toBeCloseTo(Math.min(1, 3 * c.p), 14);
  });
});
