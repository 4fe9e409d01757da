/**
 * Adjusted means per treatment arm at each visit and the treatment contrasts at each visit
 * (against the reference arm, and between every pair of arms): the fitted mean on a grid with
 * continuous covariates (the baseline) at their mean over the records used and the other
 * categorical factors weighted equally or by their frequency among the records used, as the
 * linear model's adjusted means (Searle, Speed and Milliken 1980). Also the L vectors of the
 * overall treatment test (visit-averaged differences from the reference, visits weighted equally)
 * and of the treatment-by-visit test (the interaction's coefficients).
 */
import { designRow, type CategoricalVariable, type Variable } from "../design";
import type { MeansWeighting } from "../adjusted-means";
import type { RepeatedData } from "./repeated-data";

export interface VisitGrid {
  readonly covariates: readonly { readonly variable: string; readonly value: number }[];
  readonly factors: readonly string[];
  readonly cells: readonly { readonly levels: readonly string[]; readonly weight: number }[];
}

export interface MeanVector {
  readonly arm: string;
  readonly visit: string;
  readonly l: Float64Array;
}

export interface ContrastVector {
  readonly label: string;
  readonly level: string;
  readonly reference: string;
  readonly visit: string;
  readonly l: Float64Array;
}

export interface VisitMeanVectors {
  readonly treatment: string;
  readonly grid: VisitGrid;
  readonly means: readonly MeanVector[];
  readonly contrasts: readonly ContrastVector[];
  /** Between non-reference arms (empty with two arms). */
  readonly pairwise: readonly ContrastVector[];
  /** Rows of the overall treatment test. */
  readonly treatmentRows: readonly Float64Array[];
}

export function visitMeanVectors(rd: RepeatedData, weighting: MeansWeighting): VisitMeanVectors | null {
  const { spec, data, design, visitVariable } = rd;
  if (!spec.treatment) return null;
  const treatment = data.variables.get(spec.treatment) as CategoricalVariable;
  const others = [...data.variables.values()].filter(
    (v): v is CategoricalVariable =>
      v.kind === "categorical" && v.name !== treatment.name && v.name !== visitVariable.name,
  );
  let cells: { levels: number[]; weight: number }[] = [{ levels: [], weight: 1 }];
  for (const f of others) {
    const next: typeof cells = [];
    for (let l = 0; l < f.levels.length; l++)
      for (const c of cells) next.push({ levels: [...c.levels, l], weight: 1 });
    cells = next;
  }
  if (weighting === "proportional" && others.length > 0) {
    const counts = new Map<string, number>();
    for (let i = 0; i < design.n; i++) {
      const key = others.map((f) => f.codes[i]).join(",");
      counts.set(key, (counts.get(key) ?? 0) + 1);
    }
    for (const c of cells) c.weight = counts.get(c.levels.join(",")) ?? 0;
  }
  const total = cells.reduce((s, c) => s + c.weight, 0);
  const p = design.p;
  const vector = (arm: number, visitLevel: number): Float64Array => {
    const l = new Float64Array(p);
    for (const cell of cells) {
      if (cell.weight === 0) continue;
      const point = new Map<string, number>();
      for (const v of data.variables.values() as Iterable<Variable>)
        if (v.kind === "continuous") point.set(v.name, v.mean);
      point.set(treatment.name, arm);
      point.set(visitVariable.name, visitLevel);
      others.forEach((f, i) => point.set(f.name, cell.levels[i]));
      const row = designRow(design, data.variables, point);
      for (let j = 0; j < p; j++) l[j] += (row[j] * cell.weight) / total;
    }
    return l;
  };
  const levelOfVisit = rd.visits.map((v) => visitVariable.levels.indexOf(v));
  const means: MeanVector[] = [];
  const byArm: Float64Array[][] = treatment.levels.map(() => []);
  rd.visits.forEach((visit, vi) => {
    treatment.levels.forEach((arm, a) => {
      const l = vector(a, levelOfVisit[vi]);
      byArm[a][vi] = l;
      means.push({ arm, visit, l });
    });
  });
  const ref = treatment.referenceIndex;
  const diff = (a: Float64Array, b: Float64Array) => a.map((v, j) => v - b[j]);
  const contrasts: ContrastVector[] = [];
  const pairwise: ContrastVector[] = [];
  rd.visits.forEach((visit, vi) => {
    treatment.levels.forEach((level, a) => {
      if (a === ref) return;
      contrasts.push({
        label: `${level} vs ${treatment.reference}`,
        level,
        reference: treatment.reference,
        visit,
        l: diff(byArm[a][vi], byArm[ref][vi]),
      });
    });
    treatment.levels.forEach((level, a) => {
      treatment.levels.forEach((other, b) => {
        if (a === ref || b === ref || b <= a) return;
        pairwise.push({
          label: `${other} vs ${level}`,
          level: other,
          reference: level,
          visit,
          l: diff(byArm[b][vi], byArm[a][vi]),
        });
      });
    });
  });
  const treatmentRows = treatment.levels.flatMap((_, a) => {
    if (a === ref) return [];
    const l = new Float64Array(p);
    rd.visits.forEach((_, vi) => {
      for (let j = 0; j < p; j++) l[j] += (byArm[a][vi][j] - byArm[ref][vi][j]) / rd.visits.length;
    });
    return [l];
  });
  const grid: VisitGrid = {
    covariates: [...data.variables.values()]
      .filter((v): v is Extract<Variable, { kind: "continuous" }> => v.kind === "continuous")
      .map((v) => ({ variable: v.name, value: v.mean })),
    factors: others.map((f) => f.name),
    cells: cells.map((c) => ({
      levels: c.levels.map((l, i) => others[i].levels[l]),
      weight: c.weight / total,
    })),
  };
  return { treatment: treatment.name, grid, means, contrasts, pairwise, treatmentRows };
}

/** Rows of the treatment-by-visit test: unit vectors on the interaction's columns; null without it. */
export function treatmentByVisitRows(rd: RepeatedData): Float64Array[] | null {
  const treatment = rd.spec.treatment;
  if (!treatment) return null;
  const term = rd.design.terms.find(
    (t) =>
      t.variables.length === 2 &&
      t.variables.includes(treatment) &&
      t.variables.includes(rd.visitVariable.name),
  );
  if (!term || term.columns.length === 0) return null;
  return term.columns.map((j) => {
    const l = new Float64Array(rd.design.p);
    l[j] = 1;
    return l;
  });
}
