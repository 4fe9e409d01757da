/**
 * Adjusted (least-squares) means of the response per treatment arm and contrasts against the
 * reference arm (Searle, Speed and Milliken 1980, "Population marginal means in the linear model",
 * The American Statistician 34, 216–221): the fitted model evaluated on a grid with continuous
 * covariates at their mean over the rows used and averaged over the levels of the other
 * categorical factors, equally (the default) or in proportion to their observed frequencies.
 * Standard errors √(L'VL) with V the model-based or the HC3 covariance; t on the residual df.
 * Contrasts are each arm against the reference, or every pair of arms (the reference against
 * each arm first, then the other pairs, later level against earlier); their p-values may be
 * adjusted for multiplicity within that family (multiplicity.ts).
 */
import { designRow, type CategoricalVariable, type Variable } from "./design";
import { tQuantile, tTwoSided } from "./distributions";
import type { LinearFitContext } from "./linear-fit-context";
import type { ContrastSet } from "./model-spec";
import { adjustPValues, type Multiplicity } from "./multiplicity";

export type MeansWeighting = "equal" | "proportional";

/** What the plan asks of the treatment contrasts. */
export interface ContrastPlan {
  readonly set: ContrastSet;
  readonly multiplicity: Multiplicity;
}

/** The pairs (level index, compared-with index) of a contrast set, reference comparisons first. */
export function contrastPairs(levels: number, reference: number, set: ContrastSet): [number, number][] {
  const pairs: [number, number][] = [];
  for (let i = 0; i < levels; i++) if (i !== reference) pairs.push([i, reference]);
  if (set === "pairwise") {
    for (let a = 0; a < levels; a++)
      for (let b = a + 1; b < levels; b++) if (a !== reference && b !== reference) pairs.push([b, a]);
  }
  return pairs;
}

export interface Interval {
  readonly se: number;
  readonly lower: number;
  readonly upper: number;
}

export interface AdjustedMean extends Interval {
  readonly level: string;
  readonly estimate: number;
  /** The same mean with HC3 standard error. */
  readonly hc3: Interval;
}

export interface ContrastInterval extends Interval {
  readonly statistic: number;
  readonly p: number;
  /** p adjusted for multiplicity within the plan's family of contrasts (absent without a method). */
  readonly pAdjusted?: number;
}

export interface Contrast extends ContrastInterval {
  /** "LEVEL vs REFERENCE". */
  readonly label: string;
  readonly level: string;
  readonly reference: string;
  readonly estimate: number;
  readonly hc3: ContrastInterval;
}

/** The grid the adjusted means average over: covariates fixed, cells of the other factors weighted. */
export interface AdjustedMeansGrid {
  /** Continuous covariates, each held at its mean over the rows used. */
  readonly covariates: readonly { readonly variable: string; readonly value: number }[];
  /** Mean offset added to every adjusted mean (null without an offset). */
  readonly offset: number | null;
  /** The other categorical variables, in the order of each cell's levels. */
  readonly factors: readonly string[];
  /** Every combination of their levels with its weight (weights sum to one). */
  readonly cells: readonly { readonly levels: readonly string[]; readonly weight: number }[];
}

export interface AdjustedMeans {
  readonly weighting: MeansWeighting;
  readonly grid: AdjustedMeansGrid;
  readonly means: readonly AdjustedMean[];
  readonly contrasts: readonly Contrast[];
  readonly contrastSet: ContrastSet;
  readonly multiplicity: Multiplicity;
}

function quadratic(l: Float64Array, v: Float64Array, p: number): number {
  let s = 0;
  for (let a = 0; a < p; a++) {
    let t = 0;
    for (let b = 0; b < p; b++) t += v[b * p + a] * l[b];
    s += l[a] * t;
  }
  return s;
}

/** Adjusted means and contrasts for the model's treatment; null without a treatment. */
export function adjustedMeans(
  ctx: LinearFitContext,
  covariance: Float64Array,
  hc3: Float64Array,
  weighting: MeansWeighting = "equal",
  plan: ContrastPlan = { set: "reference", multiplicity: "none" },
): AdjustedMeans | null {
  const { spec, data, design, fit } = ctx;
  if (!spec.treatment) return null;
  const treatment = data.variables.get(spec.treatment) as CategoricalVariable;
  const others = [...data.variables.values()].filter(
    (v): v is CategoricalVariable => v.kind === "categorical" && v.name !== treatment.name,
  );
  const p = design.p;
  const df = fit.dfResidual;
  const q = tQuantile(0.975, df);
  let offsetMean = 0;
  if (data.offset) {
    for (const v of data.offset) offsetMean += v;
    offsetMean /= data.offset.length;
  }

  // grid of the other factors' level combinations with their weights
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
  const totalWeight = cells.reduce((s, c) => s + c.weight, 0);

  const lVectors = treatment.levels.map((_, level) => {
    const l = new Float64Array(p);
    for (const cell of cells) {
      if (cell.weight === 0) continue;
      const point = new Map<string, number>();
      for (const v of data.variables.values() as Iterable<Variable>) {
        if (v.kind === "continuous") point.set(v.name, v.mean);
      }
      point.set(treatment.name, level);
      others.forEach((f, i) => point.set(f.name, cell.levels[i]));
      const row = designRow(design, data.variables, point);
      for (let j = 0; j < p; j++) l[j] += (row[j] * cell.weight) / totalWeight;
    }
    return l;
  });
  const estimateOf = (l: Float64Array) => {
    let s = 0;
    for (let j = 0; j < p; j++) s += l[j] * fit.coefficients[j];
    return s;
  };
  const interval = (est: number, l: Float64Array, v: Float64Array): Interval => {
    const se = Math.sqrt(quadratic(l, v, p));
    return { se, lower: est - q * se, upper: est + q * se };
  };
  const means = treatment.levels.map((level, i) => {
    const est = estimateOf(lVectors[i]) + offsetMean;
    return {
      level,
      estimate: est,
      ...interval(est, lVectors[i], covariance),
      hc3: interval(est, lVectors[i], hc3),
    };
  });
  const ref = treatment.referenceIndex;
  const raw = contrastPairs(treatment.levels.length, ref, plan.set).map(([i, j]) => {
    const l = lVectors[i].map((v, k) => v - lVectors[j][k]);
    const est = estimateOf(l);
    const withT = (iv: Interval): ContrastInterval => {
      const statistic = est / iv.se;
      return { ...iv, statistic, p: tTwoSided(statistic, df) };
    };
    return {
      label: `${treatment.levels[i]} vs ${treatment.levels[j]}`,
      level: treatment.levels[i],
      reference: treatment.levels[j],
      estimate: est,
      ...withT(interval(est, l, covariance)),
      hc3: withT(interval(est, l, hc3)),
    };
  });
  const adjusted =
    plan.multiplicity === "none"
      ? null
      : adjustPValues(
          raw.map((c) => c.p),
          plan.multiplicity,
        );
  const adjustedHc3 =
    plan.multiplicity === "none"
      ? null
      : adjustPValues(
          raw.map((c) => c.hc3.p),
          plan.multiplicity,
        );
  const contrasts: Contrast[] = raw.map((c, k) =>
    adjusted && adjustedHc3
      ? { ...c, pAdjusted: adjusted[k], hc3: { ...c.hc3, pAdjusted: adjustedHc3[k] } }
      : c,
  );
  const grid: AdjustedMeansGrid = {
    covariates: [...data.variables.values()]
      .filter((v): v is Extract<Variable, { kind: "continuous" }> => v.kind === "continuous")
      .map((v) => ({ variable: v.name, value: v.mean })),
    offset: data.offset ? offsetMean : null,
    factors: others.map((f) => f.name),
    cells: cells.map((c) => ({
      levels: c.levels.map((l, i) => others[i].levels[l]),
      weight: c.weight / totalWeight,
    })),
  };
  return { weighting, grid, means, contrasts, contrastSet: plan.set, multiplicity: plan.multiplicity };
}
