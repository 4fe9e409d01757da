/**
 * The log-rank test of equal survival across groups, stratified: observed minus expected events
 * per group and their hypergeometric covariance summed over the event times of every stratum,
 * statistic (O − E)' V⁻ (O − E) on groups − 1 degrees of freedom (Mantel 1966; Peto and Peto
 * 1972), as R's survdiff computes it with rho = 0. Rows count once (no case weights).
 */
import { chiSquareUpper } from "../distributions";
import type { ChiSquareTest } from "./proportional-hazards";
import { inverseQuadraticForm } from "./symmetric";

export interface LogRankTest extends ChiSquareTest {
  readonly observed: number[];
  readonly expected: number[];
}

export function logRank(
  group: ArrayLike<number>,
  groups: number,
  stratum: ArrayLike<number>,
  time: ArrayLike<number>,
  status: ArrayLike<number>,
): LogRankTest {
  const n = time.length;
  const observed = new Array<number>(groups).fill(0);
  const expected = new Array<number>(groups).fill(0);
  const v = new Float64Array(groups * groups);
  const idx = Array.from({ length: n }, (_, i) => i).sort(
    (a, b) => stratum[a] - stratum[b] || time[a] - time[b],
  );
  for (let s0 = 0; s0 < n;) {
    let s1 = s0;
    while (s1 < n && stratum[idx[s1]] === stratum[idx[s0]]) s1++;
    const atRisk = new Array<number>(groups).fill(0);
    for (let q = s0; q < s1; q++) atRisk[group[idx[q]]]++;
    let total = s1 - s0;
    for (let s = s0; s < s1;) {
      let e = s + 1;
      while (e < s1 && time[idx[e]] === time[idx[s]]) e++;
      const deaths = new Array<number>(groups).fill(0);
      let d = 0;
      for (let q = s; q < e; q++) {
        if (status[idx[q]] === 1) {
          deaths[group[idx[q]]]++;
          d++;
        }
      }
      if (d > 0) {
        const factor = total > 1 ? (d * (total - d)) / (total - 1) : 0;
        for (let j = 0; j < groups; j++) {
          observed[j] += deaths[j];
          expected[j] += (d * atRisk[j]) / total;
          for (let k = 0; k < groups; k++) {
            v[j * groups + k] += factor * (atRisk[j] / total) * ((j === k ? 1 : 0) - atRisk[k] / total);
          }
        }
      }
      for (let q = s; q < e; q++) atRisk[group[idx[q]]]--;
      total -= e - s;
      s = e;
    }
    s0 = s1;
  }
  // drop the last group: V is singular with rank groups − 1 when every group has rows at risk
  const k = groups - 1;
  const sub = new Float64Array(k * k);
  for (let j = 0; j < k; j++) for (let l = 0; l < k; l++) sub[j * k + l] = v[j * groups + l];
  const diff = Array.from({ length: k }, (_, j) => observed[j] - expected[j]);
  const statistic = inverseQuadraticForm(sub, k, diff);
  return { statistic, df: k, p: chiSquareUpper(statistic, k), observed, expected };
}
