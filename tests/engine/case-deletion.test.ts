// Closed-form case deletion (Cook and Weisberg 1982, section 3.6; Belsley, Kuh and Welsch 1980)
// checked three ways: against explicit refits without the rows (the engine's own fitLinear, on
// invented seeded data, to 1e-9), against the DFBETAS relation for single rows, and against
// R's lm refits (tests/reference/case-deletion/values.json, made by generate.R beside it).
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { mulberry32 } from "~/engine/seeded-uniform";
import { contrastOf, deleteCases, type DeletedCase, type FullFit } from "~/engine/case-deletion";
import { defaultChecks, evaluateChecks } from "~/engine/checks";
import { toDataTable } from "~/engine/data";
import { buildDesign, prepareData } from "~/engine/design";
import { fitLinear, type ModelSpecInput } from "~/engine";
import { leastSquares } from "~/engine/least-squares";
import { readCsvText } from "~/engine-io/read-csv";
import { rerunTable, whatIfInputs, type RerunTable as ColumnTable } from "~/.server/reruns/what-if.server";
import type { RerunDocument } from "~/.server/reruns/reruns.server";

/** mulberry32 (public domain): the same stream on every machine. */
const uniform = mulberry32;

/** Invented trial: three arms, baseline, age, sex, positive weights; one planted outlier. */
function inventedTable(n: number, seed: number): ColumnTable {
  const u = uniform(seed);
  const normal = () => Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
  const arms = ["A-placebo", "B-low", "C-high"];
  const cols: Record<string, string[]> = { id: [], arm: [], base: [], age: [], sex: [], w: [], y: [] };
  for (let i = 0; i < n; i++) {
    const arm = arms[i % 3];
    const base = 50 + 10 * normal();
    const age = 30 + Math.floor(40 * u());
    const sex = u() < 0.5 ? "F" : "M";
    const effect = arm === "C-high" ? -6 : arm === "B-low" ? -3 : 0;
    let y = 5 + effect - 0.3 * (base - 50) + 0.05 * age + (sex === "M" ? 1 : 0) + 4 * normal();
    if (i === 7) y += 35;
    cols.id.push(`S${String(i + 1).padStart(3, "0")}`);
    cols.arm.push(arm);
    cols.base.push(base.toFixed(2));
    cols.age.push(String(age));
    cols.sex.push(sex);
    cols.w.push((0.5 + u()).toFixed(3));
    cols.y.push(y.toFixed(3));
  }
  return { columns: cols, rowNumbers: Array.from({ length: n }, (_, i) => i + 1) };
}

const SPEC: ModelSpecInput = {
  response: "y",
  terms: [{ variable: "arm" }, { variable: "base" }, { variable: "age" }, { variable: "sex" }],
  id: "id",
  treatment: "arm",
};

/** The full fit and every row's deletion case, built the way what-if.server.ts builds them. */
function prepared(table: ColumnTable, weighted: boolean) {
  const spec = fitLinear(weighted ? { ...SPEC, weights: "w" } : SPEC, table).spec;
  const data = prepareData(spec, toDataTable(table));
  const design = buildDesign(spec, data);
  const { n, p } = design;
  const outcome = leastSquares({
    x: design.x,
    n,
    p,
    y: data.response,
    weights: data.weights,
    offset: data.offset,
  });
  if (!outcome.ok) throw new Error("aliased");
  const fit = outcome.fit;
  const c: number[] = [];
  for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) c.push(fit.unscaledCovariance[b * p + a]);
  const full: FullFit = {
    n,
    p,
    coefficients: Array.from(fit.coefficients),
    unscaledCovariance: c,
    rss: fit.rss,
  };
  const caseOf = (row: number): DeletedCase => {
    const k = data.used.findIndex((u) => data.rowNumbers[u] === row);
    const sw = data.weights ? Math.sqrt(data.weights[k]) : 1;
    return {
      x: Array.from({ length: p }, (_, j) => design.x[j * n + k] * sw),
      residual: fit.weightedResiduals[k],
    };
  };
  return { spec, full, caseOf, names: design.names };
}

function without(table: ColumnTable, rows: readonly number[]): ColumnTable {
  const drop = new Set(rows);
  const keep = table.rowNumbers.map((r, i) => (drop.has(r) ? -1 : i)).filter((i) => i >= 0);
  const columns: Record<string, string[]> = {};
  for (const [k, v] of Object.entries(table.columns)) columns[k] = keep.map((i) => v[i]);
  return { columns, rowNumbers: keep.map((i) => table.rowNumbers[i]) };
}

const close = (a: number, b: number, tol: number, label: string) =>
  expect(Math.abs(a - b) <= tol * Math.max(1, Math.abs(b)), `${label}: ${a} vs ${b}`).toBe(true);

describe("closed-form case deletion equals an explicit refit without the rows", () => {
  const table = inventedTable(90, 20261202);
  for (const weighted of [false, true]) {
    for (const rows of [[8], [8, 20, 33], [1, 2, 3, 4, 5, 6, 40, 41, 88, 90]]) {
      it(`${weighted ? "weighted" : "unweighted"}, without rows ${rows.join(", ")}`, () => {
        const { spec, full, caseOf } = prepared(table, weighted);
        const out = deleteCases(full, rows.map(caseOf));
        expect(out.ok).toBe(true);
        if (!out.ok) return;
        const refit = fitLinear(spec, without(table, rows));
        expect(out.dfResidual).toBe(refit.dfResidual);
        refit.coefficients.forEach((c, j) =>
          close(out.coefficients[j], c.estimate, 1e-9, `coefficient ${c.name}`),
        );
        close(out.rss, refit.fit.rss, 1e-9, "RSS");
        close(out.sigma, refit.fit.sigma, 1e-9, "sigma");
        refit.coefficients.forEach((c, j) =>
          close(out.sigma * Math.sqrt(out.unscaledCovariance[j * full.p + j]), c.se, 1e-9, `SE ${c.name}`),
        );
        for (const stored of refit.contrasts ?? []) {
          const j = refit.coefficients.findIndex((c) => c.name.includes(stored.level));
          const l = Array.from({ length: full.p }, (_, k) => (k === j ? 1 : 0));
          const est = contrastOf(out, l);
          close(est.estimate, stored.estimate, 1e-9, `${stored.label} estimate`);
          close(est.se, stored.se, 1e-9, `${stored.label} SE`);
          close(est.lower, stored.lower, 1e-9, `${stored.label} lower`);
          close(est.upper, stored.upper, 1e-9, `${stored.label} upper`);
          close(est.p, stored.p, 1e-7, `${stored.label} p`);
        }
      });
    }
  }

  it("for one row, (b − b₍ᵢ₎)/(σ̂₍ᵢ₎ √Cⱼⱼ) is the engine's DFBETAS (Belsley, Kuh and Welsch 1980, eq. 2.7)", () => {
    for (const weighted of [false, true]) {
      const { spec, full, caseOf } = prepared(table, weighted);
      const r = fitLinear(spec, table);
      for (const i of [0, 7, 45, 89]) {
        const out = deleteCases(full, [caseOf(r.observations.row[i])]);
        if (!out.ok) throw new Error(out.reason);
        for (let j = 0; j < full.p; j++) {
          const dfbetas =
            (full.coefficients[j] - out.coefficients[j]) /
            (out.sigma * Math.sqrt(full.unscaledCovariance[j * full.p + j]));
          close(dfbetas, r.observations.dfbetas[j][i], 1e-9, `DFBETAS row ${i + 1} coefficient ${j}`);
        }
      }
    }
  });

  it("says so when the remaining rows no longer determine every coefficient", () => {
    const { full, caseOf } = prepared(table, false);
    // every subject of arm B-low: rows 2, 5, 8, ...
    const rows = table.rowNumbers.filter((_, i) => i % 3 === 1);
    const out = deleteCases(full, rows.map(caseOf));
    expect(out.ok).toBe(false);
    if (!out.ok) expect(out.reason).toMatch(/no longer determine/);
  });

  it("with nothing deleted gives the full fit", () => {
    const { spec, full } = prepared(table, true);
    const r = fitLinear(spec, table);
    const out = deleteCases(full, []);
    if (!out.ok) throw new Error(out.reason);
    close(out.sigma, r.fit.sigma, 1e-12, "sigma");
  });
});

interface RCase {
  case: string;
  weighted: boolean;
  drop: number[];
  coefficients: number[];
  sigma: number;
  df: number;
  contrasts: { label: string; estimate: number; se: number; lower: number; upper: number; p: number }[];
}

describe("closed-form case deletion agrees with R's lm refits (tests/reference/case-deletion/values.json)", () => {
  const ref = JSON.parse(
    readFileSync(join(import.meta.dirname, "../reference/case-deletion/values.json"), "utf8"),
  ) as { source: string; cases: RCase[] };
  const table = readCsvText(
    readFileSync(join(import.meta.dirname, "../reference/data/trial-ancova.csv"), "utf8"),
  );
  const spec: ModelSpecInput = {
    response: "chg",
    terms: [
      { variable: "arm", reference: "Placebo" },
      { variable: "base" },
      { variable: "age" },
      { variable: "sex" },
    ],
    id: "subject",
    treatment: "arm",
  };
  for (const c of ref.cases) {
    it(`${c.case} (${ref.source})`, () => {
      const s = c.weighted ? { ...spec, weights: "w" } : spec;
      const r = fitLinear(s, table);
      const data = prepareData(r.spec, toDataTable(table));
      const design = buildDesign(r.spec, data);
      const { n, p } = design;
      const o = leastSquares({ x: design.x, n, p, y: data.response, weights: data.weights });
      if (!o.ok) throw new Error("aliased");
      const cm: number[] = [];
      for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) cm.push(o.fit.unscaledCovariance[b * p + a]);
      // a dropped row with a missing cell (data row 99) is not in the fit to begin with
      const cases = c.drop
        .filter((row) => r.observations.row.includes(row))
        .map((row) => {
          const k = r.observations.row.indexOf(row);
          const sw = data.weights ? Math.sqrt(data.weights[k]) : 1;
          return {
            x: Array.from({ length: p }, (_, j) => design.x[j * n + k] * sw),
            residual: o.fit.weightedResiduals[k],
          };
        });
      const out = deleteCases(
        { n, p, coefficients: Array.from(o.fit.coefficients), unscaledCovariance: cm, rss: o.fit.rss },
        cases,
      );
      if (!out.ok) throw new Error(out.reason);
      expect(out.dfResidual).toBe(c.df);
      c.coefficients.forEach((v, j) => close(out.coefficients[j], v, 1e-9, `coefficient ${j}`));
      close(out.sigma, c.sigma, 1e-9, "sigma");
      for (const rc of c.contrasts) {
        const j = design.names.findIndex((nm) => nm.includes(rc.label.replace(" vs Placebo", "")));
        const est = contrastOf(
          out,
          Array.from({ length: p }, (_, k) => (k === j ? 1 : 0)),
        );
        close(est.estimate, rc.estimate, 1e-9, `${rc.label} estimate`);
        close(est.se, rc.se, 1e-9, `${rc.label} SE`);
        close(est.lower, rc.lower, 1e-9, `${rc.label} lower`);
        close(est.upper, rc.upper, 1e-9, `${rc.label} upper`);
        expect(Math.abs(est.p - rc.p) <= 1e-6 * rc.p, `${rc.label} p ${est.p} vs R ${rc.p}`).toBe(true);
      }
    });
  }
});

describe("what-if inputs from a stored rerun", () => {
  const table = inventedTable(90, 7);
  const doc = (spec: ModelSpecInput): RerunDocument => {
    const result = fitLinear(spec, table);
    return {
      population: null,
      options: { variant: "planned" },
      result,
      checks: evaluateChecks(result, defaultChecks(true)),
    } as unknown as RerunDocument;
  };

  it("offers the flagged subjects, most influential first, and reproduces the refit without them", () => {
    const d = doc(SPEC);
    const inputs = whatIfInputs(d, rerunTable(d, table), { prespecifiedExclusion: false });
    expect(inputs.available).toBe(true);
    if (!inputs.available) return;
    expect(inputs.caution).toBe(
      "Results support, but do not replace, qualified statistical and medical review.",
    );
    expect(inputs.candidates[0].row).toBe(8); // the planted outlier
    expect(inputs.candidates.length).toBeLessThanOrEqual(30);
    const cooks = inputs.candidates.map((c) => c.cooks);
    expect([...cooks].sort((a, b) => b - a)).toEqual(cooks);
    const chosen = inputs.candidates.slice(0, 2);
    const out = deleteCases(inputs.full, chosen);
    if (!out.ok) throw new Error(out.reason);
    const refit = fitLinear(
      SPEC,
      without(
        table,
        chosen.map((c) => c.row),
      ),
    );
    for (const [k, con] of inputs.contrasts.entries()) {
      const est = contrastOf(out, con.l);
      const stored = refit.contrasts?.[k];
      expect(stored?.label).toBe(con.label);
      close(est.estimate, stored?.estimate ?? NaN, 1e-9, `${con.label} estimate`);
      close(est.se, stored?.se ?? NaN, 1e-9, `${con.label} SE`);
    }
  });

  it("is not offered for models with treatment interactions, and says why", () => {
    const d = doc({ ...SPEC, terms: [...(SPEC.terms ?? []), { interaction: ["arm", "base"] }] });
    const inputs = whatIfInputs(d, table);
    expect(inputs.available).toBe(false);
    if (!inputs.available) expect(inputs.reason).toMatch(/treatment interactions/);
  });

  it("refuses rows that do not match the rerun's", () => {
    const d = doc(SPEC);
    const inputs = whatIfInputs(d, without(table, [3]));
    expect(inputs.available).toBe(false);
  });
});
