/**
 * Kaplan–Meier estimates with Greenwood's variance and the interval on the log scale,
 * exp(log Ŝ ± z·se), se² = Σ d/(n(n − d)), the upper limit capped at 1 (the default of R's
 * survfit). One value per distinct time (events or censorings), with the number at risk.
 */
import { normalQuantile } from "../distributions";

export interface SurvivalCurve {
  readonly time: number[];
  readonly estimate: number[];
  /** 95% limits; null where Ŝ is 0 (the log interval does not exist). */
  readonly lower: (number | null)[];
  readonly upper: (number | null)[];
  readonly atRisk: number[];
  readonly events: number[];
}

/** The curve of the given rows (indices into time and status). */
export function kaplanMeier(
  rows: readonly number[],
  time: ArrayLike<number>,
  status: ArrayLike<number>,
  level = 0.95,
): SurvivalCurve {
  const z = normalQuantile(1 - (1 - level) / 2);
  const idx = [...rows].sort((a, b) => time[a] - time[b]);
  const out: {
    time: number[];
    estimate: number[];
    lower: (number | null)[];
    upper: (number | null)[];
    atRisk: number[];
    events: number[];
  } = {
    time: [],
    estimate: [],
    lower: [],
    upper: [],
    atRisk: [],
    events: [],
  };
  let atRisk = idx.length;
  let surv = 1;
  let greenwood = 0;
  for (let s = 0; s < idx.length;) {
    let e = s + 1;
    while (e < idx.length && time[idx[e]] === time[idx[s]]) e++;
    let d = 0;
    for (let q = s; q < e; q++) d += status[idx[q]];
    surv *= 1 - d / atRisk;
    if (d > 0) greenwood += d < atRisk ? d / (atRisk * (atRisk - d)) : Infinity;
    const se = Math.sqrt(greenwood);
    out.time.push(time[idx[s]]);
    out.estimate.push(surv);
    out.atRisk.push(atRisk);
    out.events.push(d);
    if (surv > 0 && Number.isFinite(se)) {
      out.lower.push(Math.exp(Math.log(surv) - z * se));
      out.upper.push(Math.min(1, Math.exp(Math.log(surv) + z * se)));
    } else {
      out.lower.push(null);
      out.upper.push(null);
    }
    atRisk -= e - s;
    s = e;
  }
  return out;
}
