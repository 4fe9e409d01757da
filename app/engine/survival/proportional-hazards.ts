/**
 * The Grambsch–Therneau test of proportional hazards as R's survival package (3.x) computes it
 * in cox.zph: the score test, at (β̂, 0), of adding each term's interaction with a transform g(t)
 * of time, g centered at its mean over the event rows; per term (all of its coefficients) and
 * global (every coefficient). The information of the enlarged model follows from the per-event
 * blocks: for x and x·g(t), with g constant within a risk set, the blocks are V, g·V and g²·V.
 * Transforms: "km" 1 − Ŝ(t−) from the pooled, unweighted Kaplan–Meier estimate; "rank" the
 * average rank of the time among all rows; "identity"; "log".
 * Grambsch and Therneau (1994), Biometrika 81:515–526.
 */
import { chiSquareUpper } from "../distributions";
import type { CoxData } from "./cox-data";
import type { TimeTransform } from "./cox-spec";
import type { Sweep } from "./partial-likelihood";
import { inverseQuadraticForm, subMatrix } from "./symmetric";

export interface ChiSquareTest {
  readonly statistic: number;
  readonly df: number;
  readonly p: number;
}

export interface ProportionalHazardsTest {
  readonly transform: TimeTransform;
  readonly global: ChiSquareTest;
  readonly terms: (ChiSquareTest & { readonly term: string })[];
}

/** g(t) per row before centering. */
export function transformTimes(data: CoxData, transform: TimeTransform): Float64Array {
  const { n, time, status } = data;
  switch (transform) {
    case "identity":
      return Float64Array.from(time);
    case "log":
      // censored rows at time 0 give −∞ here but never enter the test; events at 0 are refused by the caller
      return time.map(Math.log);
    case "rank": {
      const idx = Array.from({ length: n }, (_, i) => i).sort((a, b) => time[a] - time[b]);
      const r = new Float64Array(n);
      for (let s = 0; s < n;) {
        let e = s + 1;
        while (e < n && time[idx[e]] === time[idx[s]]) e++;
        const avg = (s + 1 + e) / 2;
        for (let q = s; q < e; q++) r[idx[q]] = avg;
        s = e;
      }
      return r;
    }
    case "km": {
      // pooled Kaplan–Meier over all rows, no weights, no strata; left-continuous
      const idx = Array.from({ length: n }, (_, i) => i).sort((a, b) => time[a] - time[b]);
      const g = new Float64Array(n);
      let atRisk = n;
      let surv = 1;
      for (let s = 0; s < n;) {
        let e = s + 1;
        while (e < n && time[idx[e]] === time[idx[s]]) e++;
        let deaths = 0;
        for (let q = s; q < e; q++) {
          g[idx[q]] = 1 - surv;
          deaths += status[idx[q]];
        }
        surv *= 1 - deaths / atRisk;
        atRisk -= e - s;
        s = e;
      }
      return g;
    }
  }
}

export function proportionalHazardsTest(
  data: CoxData,
  fit: Sweep,
  terms: readonly { readonly label: string; readonly columns: readonly number[] }[],
  transform: TimeTransform,
): ProportionalHazardsTest {
  const { p, order, blocks, status } = data;
  const g = transformTimes(data, transform);
  let sum = 0;
  let count = 0;
  for (let i = 0; i < data.n; i++) {
    if (status[i] === 1) {
      sum += g[i];
      count++;
    }
  }
  const centre = sum / count;
  const m = 2 * p;
  const imat = new Float64Array(m * m);
  const u = new Float64Array(m);
  for (const ev of fit.events ?? []) {
    const gt = g[order[blocks[ev.block].deaths[0]]] - centre;
    for (let j = 0; j < p; j++) {
      u[p + j] += gt * ev.score[j];
      for (let l = 0; l < p; l++) {
        const v = ev.info[j * p + l];
        imat[j * m + l] += v;
        imat[j * m + p + l] += gt * v;
        imat[(p + j) * m + l] += gt * v;
        imat[(p + j) * m + p + l] += gt * gt * v;
      }
    }
  }
  const test = (gamma: readonly number[]): ChiSquareTest => {
    const idx = [...Array.from({ length: p }, (_, j) => j), ...gamma.map((j) => p + j)];
    const sub = subMatrix(imat, m, idx);
    const statistic = inverseQuadraticForm(
      sub,
      idx.length,
      idx.map((k) => u[k]),
    );
    return { statistic, df: gamma.length, p: chiSquareUpper(statistic, gamma.length) };
  };
  return {
    transform,
    terms: terms.map((t) => ({ term: t.label, ...test(t.columns) })),
    global: test(Array.from({ length: p }, (_, j) => j)),
  };
}
