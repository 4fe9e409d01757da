/**
 * The Cox partial likelihood by one sweep over the risk sets (from the latest time down, per
 * stratum), with case weights and Efron's or Breslow's handling of tied event times.
 *
 * At an event time with d tied events (total weight W), Efron's approximation takes d sub-steps
 * k = 0…d−1, each with weight c = W/d, in which the tied events' share of the risk set is
 * removed by the fraction f = k/d; Breslow's is one step with c = W and f = 0 (Efron 1977;
 * Therneau and Grambsch 2000, 3.3). Every quantity below (log-likelihood, score, information,
 * hazard increments, residuals) follows from the per-step denominators D and means x̄.
 */
import type { CoxData } from "./cox-data";
import type { Ties } from "./cox-spec";

/** The risk-set quantities at one event time. */
export interface EventTime {
  /** Index into `CoxData.blocks`. */
  readonly block: number;
  /** Sub-step weights c and death fractions f. */
  readonly c: Float64Array;
  readonly f: Float64Array;
  /** Sub-step denominators Σ w·exp(η − shift) over the (reduced) risk set. */
  readonly d: Float64Array;
  /** Sub-step means x̄ (row-major steps×p). */
  readonly xbar: Float64Array;
  /** Σ_k c_k V_k, the information contributed (row-major p×p). */
  readonly info: Float64Array;
  /** Score contributed: Σ_events w x − Σ_k c_k x̄_k. */
  readonly score: Float64Array;
}

export interface Sweep {
  readonly logLik: number;
  readonly score: Float64Array;
  /** Observed information (row-major p×p). */
  readonly info: Float64Array;
  /** exp(η − shift) per row. */
  readonly risk: Float64Array;
  readonly events: EventTime[] | null;
}

/** Linear predictor x'β + offset (x centered). */
export function linearPredictor(data: CoxData, beta: ArrayLike<number>): Float64Array {
  const { n, p, x } = data;
  const eta = Float64Array.from(data.offset);
  for (let j = 0; j < p; j++) {
    const b = beta[j];
    if (b === 0) continue;
    for (let i = 0; i < n; i++) eta[i] += x[j * n + i] * b;
  }
  return eta;
}

export function sweep(data: CoxData, eta: Float64Array, ties: Ties, keepEvents: boolean): Sweep {
  const { n, p, x, weight, order, blocks } = data;
  // a common shift of η cancels in the partial likelihood; it keeps exp() in range
  let shift = -Infinity;
  for (let i = 0; i < n; i++) shift = Math.max(shift, eta[i]);
  const risk = new Float64Array(n);
  for (let i = 0; i < n; i++) risk[i] = Math.exp(eta[i] - shift);
  const score = new Float64Array(p);
  const info = new Float64Array(p * p);
  let logLik = 0;
  const events: EventTime[] | null = keepEvents ? [] : null;

  const a = new Float64Array(p);
  const cmat = new Float64Array(p * p);
  const a2 = new Float64Array(p);
  const cmat2 = new Float64Array(p * p);
  let denom = 0;
  let current = -1;
  for (let b = blocks.length - 1; b >= 0; b--) {
    const block = blocks[b];
    if (block.stratum !== current) {
      current = block.stratum;
      denom = 0;
      a.fill(0);
      cmat.fill(0);
    }
    for (let q = block.start; q < block.end; q++) {
      const i = order[q];
      const r = weight[i] * risk[i];
      denom += r;
      for (let j = 0; j < p; j++) {
        const xj = x[j * n + i];
        a[j] += r * xj;
        for (let k = 0; k <= j; k++) cmat[j * p + k] += r * xj * x[k * n + i];
      }
    }
    if (block.deaths.length === 0) continue;
    let denom2 = 0;
    let deadWeight = 0;
    a2.fill(0);
    cmat2.fill(0);
    const eventScore = new Float64Array(p);
    for (const q of block.deaths) {
      const i = order[q];
      const w = weight[i];
      const r = w * risk[i];
      deadWeight += w;
      denom2 += r;
      logLik += w * (eta[i] - shift);
      for (let j = 0; j < p; j++) {
        const xj = x[j * n + i];
        eventScore[j] += w * xj;
        a2[j] += r * xj;
        for (let k = 0; k <= j; k++) cmat2[j * p + k] += r * xj * x[k * n + i];
      }
    }
    const nd = block.deaths.length;
    const steps = ties === "efron" && nd > 1 ? nd : 1;
    const c = new Float64Array(steps).fill(steps === 1 ? deadWeight : deadWeight / nd);
    const f = Float64Array.from({ length: steps }, (_, k) => (steps === 1 ? 0 : k / nd));
    const d = new Float64Array(steps);
    const xbar = new Float64Array(steps * p);
    const blockInfo = new Float64Array(p * p);
    for (let k = 0; k < steps; k++) {
      const dk = denom - f[k] * denom2;
      d[k] = dk;
      logLik -= c[k] * Math.log(dk);
      for (let j = 0; j < p; j++) {
        const m = (a[j] - f[k] * a2[j]) / dk;
        xbar[k * p + j] = m;
        eventScore[j] -= c[k] * m;
      }
      for (let j = 0; j < p; j++) {
        for (let l = 0; l <= j; l++) {
          const v = (cmat[j * p + l] - f[k] * cmat2[j * p + l]) / dk - xbar[k * p + j] * xbar[k * p + l];
          blockInfo[j * p + l] += c[k] * v;
        }
      }
    }
    for (let j = 0; j < p; j++) {
      for (let l = 0; l < j; l++) blockInfo[l * p + j] = blockInfo[j * p + l];
    }
    for (let j = 0; j < p; j++) score[j] += eventScore[j];
    for (let e = 0; e < p * p; e++) info[e] += blockInfo[e];
    if (events) events.push({ block: b, c, f, d, xbar, info: blockInfo, score: eventScore });
  }
  // the shift entered Σ w·η and Σ c·log D with opposite signs and the same total weight
  if (events) events.reverse();
  return { logLik, score, info, risk, events };
}
