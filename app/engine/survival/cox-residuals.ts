/**
 * Residuals of a fitted Cox model, from the risk-set quantities at the estimate (Therneau,
 * Grambsch and Fleming 1990; Therneau and Grambsch 2000, chapter 4). Each is the unweighted
 * per-row value, as R's survival package returns by default; with Efron's ties an event's own
 * share of the hazard at its time is reduced by the sub-step fractions.
 * - martingale: δ_i − exp(η_i)·Λ̂₀(t_i)
 * - deviance: sign(m)·√(−2(m + δ log(δ − m)))
 * - score: δ_i(x_i − x̄(t_i)) − ∫ exp(η_i)(x_i − x̄(s)) dΛ̂₀(s), one column per coefficient
 * - Schoenfeld: x_i − x̄(t_i) at each event (x̄ averaged over Efron's sub-steps)
 */
import type { CoxData } from "./cox-data";
import type { Sweep } from "./partial-likelihood";

export interface CoxResiduals {
  readonly martingale: Float64Array;
  readonly deviance: Float64Array;
  /** Score residuals, one array per coefficient. */
  readonly score: Float64Array[];
  /** Event rows (indices into the used rows), in stratum and time order. */
  readonly eventRows: number[];
  /** Schoenfeld residuals of the event rows, one array per coefficient. */
  readonly schoenfeld: Float64Array[];
}

export function coxResiduals(data: CoxData, fit: Sweep): CoxResiduals {
  const { n, p, x, order, blocks, status } = data;
  const events = fit.events ?? [];
  const risk = fit.risk;
  const martingale = new Float64Array(n);
  const score = Array.from({ length: p }, () => new Float64Array(n));
  const eventRows: number[] = [];
  const schoenfeld: number[][] = Array.from({ length: p }, () => []);

  const byBlock = new Map(events.map((e) => [e.block, e]));
  let current = -1;
  let h1 = 0;
  const h2 = new Float64Array(p);
  const full2 = new Float64Array(p);
  const own2 = new Float64Array(p);
  const mean = new Float64Array(p);
  for (let b = 0; b < blocks.length; b++) {
    const block = blocks[b];
    if (block.stratum !== current) {
      current = block.stratum;
      h1 = 0;
      h2.fill(0);
    }
    const ev = byBlock.get(b);
    let full1 = 0;
    let own1 = 0;
    full2.fill(0);
    own2.fill(0);
    mean.fill(0);
    if (ev) {
      let cSum = 0;
      for (let k = 0; k < ev.c.length; k++) {
        const hz = ev.c[k] / ev.d[k];
        full1 += hz;
        own1 += hz * (1 - ev.f[k]);
        cSum += ev.c[k];
        for (let j = 0; j < p; j++) {
          const m = ev.xbar[k * p + j];
          full2[j] += hz * m;
          own2[j] += hz * (1 - ev.f[k]) * m;
          mean[j] += ev.c[k] * m;
        }
      }
      for (let j = 0; j < p; j++) mean[j] /= cSum;
    }
    for (let q = block.start; q < block.end; q++) {
      const i = order[q];
      const died = status[i] === 1;
      const haz1 = h1 + (died ? own1 : full1);
      martingale[i] = status[i] - risk[i] * haz1;
      for (let j = 0; j < p; j++) {
        const haz2 = h2[j] + (died ? own2[j] : full2[j]);
        const xij = x[j * n + i];
        score[j][i] = (died ? xij - mean[j] : 0) - risk[i] * (xij * haz1 - haz2);
      }
      if (died) {
        eventRows.push(i);
        for (let j = 0; j < p; j++) schoenfeld[j].push(x[j * n + i] - mean[j]);
      }
    }
    h1 += full1;
    for (let j = 0; j < p; j++) h2[j] += full2[j];
  }
  const deviance = martingale.map((m, i) => {
    const d = status[i];
    return Math.sign(m) * Math.sqrt(-2 * (m + (d === 0 ? 0 : d * Math.log(d - m))));
  });
  return { martingale, deviance, score, eventRows, schoenfeld: schoenfeld.map((s) => Float64Array.from(s)) };
}
