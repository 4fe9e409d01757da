/**
 * Observation-level diagnostics from the thin Q and R of √W X, in O(n·p²) without refits
 * (Belsley, Kuh and Welsch 1980, Regression Diagnostics, chapter 2; Cook 1977).
 * With prior weights the scaled quantities use the weighted residual √w·e.
 */
import type { LeastSquaresFit } from "./least-squares";

export interface ObservationDiagnostics {
  /** Hat-matrix diagonal h = Σₖ Q²ᵢₖ. */
  readonly leverage: Float64Array;
  /** r = √w e / (σ̂ √(1−h)). */
  readonly studentizedInternal: Float64Array;
  /** t = √w e / (σ̂₍ᵢ₎ √(1−h)). */
  readonly studentizedExternal: Float64Array;
  /** σ̂₍ᵢ₎² = ((n−p)σ̂² − w e²/(1−h)) / (n−p−1). */
  readonly deletionSigma: Float64Array;
  /** D = r² h / (p (1−h)). */
  readonly cooksDistance: Float64Array;
  /** DFFITS = t √(h/(1−h)). */
  readonly dffits: Float64Array;
  /** DFBETAS per coefficient: (R⁻¹qᵢ)ⱼ √w e/(1−h) / (σ̂₍ᵢ₎ √((X'WX)⁻¹)ⱼⱼ). */
  readonly dfbetas: readonly Float64Array[];
}

/** Leverages above this are treated as 1 (the point fixes its own fitted value). */
const LEVERAGE_ONE = 1 - 10 * Number.EPSILON;

/** Hat-matrix diagonal from the thin Q (n×p column-major). */
export function leverages(q: Float64Array, n: number, p: number): Float64Array {
  const h = new Float64Array(n);
  let k = 0;
  for (; k + 3 < p; k += 4) {
    const o0 = k * n,
      o1 = o0 + n,
      o2 = o1 + n,
      o3 = o2 + n;
    for (let i = 0; i < n; i++) {
      const a = q[o0 + i],
        b = q[o1 + i],
        c = q[o2 + i],
        d = q[o3 + i];
      h[i] += a * a + b * b + c * c + d * d;
    }
  }
  for (; k < p; k++) {
    const off = k * n;
    for (let i = 0; i < n; i++) h[i] += q[off + i] * q[off + i];
  }
  for (let i = 0; i < n; i++) if (h[i] > LEVERAGE_ONE) h[i] = 1;
  return h;
}

/** Every observation-level diagnostic of a least-squares fit. */
export function observationDiagnostics(fit: LeastSquaresFit): ObservationDiagnostics {
  const { n, p, q, rInverse, unscaledCovariance, sigma, dfResidual } = fit;
  const e = fit.weightedResiduals;
  const h = leverages(q, n, p);
  const internal = new Float64Array(n);
  const external = new Float64Array(n);
  const deletionSigma = new Float64Array(n);
  const cook = new Float64Array(n);
  const dffits = new Float64Array(n);
  const rowFactor = new Float64Array(n);
  const rssTotal = dfResidual * sigma * sigma;
  for (let i = 0; i < n; i++) {
    const oneMinusH = 1 - h[i];
    if (oneMinusH <= 0) {
      internal[i] = external[i] = cook[i] = dffits[i] = rowFactor[i] = NaN;
      deletionSigma[i] = dfResidual > 1 ? Math.sqrt(rssTotal / (dfResidual - 1)) : NaN;
      continue;
    }
    const s2i = (rssTotal - (e[i] * e[i]) / oneMinusH) / (dfResidual - 1);
    const si = Math.sqrt(Math.max(0, s2i));
    deletionSigma[i] = si;
    const r = e[i] / (sigma * Math.sqrt(oneMinusH));
    const t = e[i] / (si * Math.sqrt(oneMinusH));
    internal[i] = r;
    external[i] = t;
    cook[i] = (r * r * h[i]) / (p * oneMinusH);
    dffits[i] = t * Math.sqrt(h[i] / oneMinusH);
    rowFactor[i] = e[i] / (oneMinusH * si);
  }
  // DFBETAS column j = (Q R⁻ᵀ)[:, j] · rowFactor / √Cⱼⱼ, with (Q R⁻ᵀ)[:, j] = Σ_{k≥j} Q[:, k] R⁻¹[j, k];
  // rows in chunks so the chunk of Q stays in cache, four columns of Q per pass
  const dfbetas: Float64Array[] = [];
  for (let j = 0; j < p; j++) dfbetas.push(new Float64Array(n));
  const CHUNK = 512;
  for (let r0 = 0; r0 < n; r0 += CHUNK) {
    const r1 = Math.min(n, r0 + CHUNK);
    for (let j = 0; j < p; j++) {
      const col = dfbetas[j];
      let k = j;
      for (; k + 3 < p; k += 4) {
        const c0 = rInverse[k * p + j];
        const c1 = rInverse[(k + 1) * p + j];
        const c2 = rInverse[(k + 2) * p + j];
        const c3 = rInverse[(k + 3) * p + j];
        const o0 = k * n;
        const o1 = o0 + n;
        const o2 = o1 + n;
        const o3 = o2 + n;
        for (let i = r0; i < r1; i++)
          col[i] += q[o0 + i] * c0 + q[o1 + i] * c1 + q[o2 + i] * c2 + q[o3 + i] * c3;
      }
      for (; k < p; k++) {
        const c = rInverse[k * p + j];
        const off = k * n;
        for (let i = r0; i < r1; i++) col[i] += q[off + i] * c;
      }
      const scale = 1 / Math.sqrt(unscaledCovariance[j * p + j]);
      for (let i = r0; i < r1; i++) col[i] *= rowFactor[i] * scale;
    }
  }
  return {
    leverage: h,
    studentizedInternal: internal,
    studentizedExternal: external,
    deletionSigma,
    cooksDistance: cook,
    dffits,
    dfbetas,
  };
}

/**
 * Heteroscedasticity-consistent covariance matrices HC0–HC3 (White 1980; MacKinnon and White
 * 1985; Long and Ervin 2000): R⁻¹ (Q' Ω Q) R⁻ᵀ with ωᵢ = ẽᵢ², ẽᵢ²·n/(n−p), ẽᵢ²/(1−hᵢ),
 * ẽᵢ²/(1−hᵢ)², ẽ = √w e.
 */
export function robustCovariances(
  fit: LeastSquaresFit,
  leverage: Float64Array,
): { HC0: Float64Array; HC1: Float64Array; HC2: Float64Array; HC3: Float64Array } {
  const { n, p, q, rInverse } = fit;
  const e = fit.weightedResiduals;
  const w0 = new Float64Array(n);
  const w2 = new Float64Array(n);
  const w3 = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const e2 = e[i] * e[i];
    const m = 1 - leverage[i];
    w0[i] = e2;
    w2[i] = e2 / m;
    w3[i] = e2 / (m * m);
  }
  const g0 = new Float64Array(p * p);
  const g2 = new Float64Array(p * p);
  const g3 = new Float64Array(p * p);
  // Q' diag(ω) Q for the three weightings: rows in chunks, so that a chunk of Q stays in cache
  // while every pair of its columns is summed (one pass over Q from memory, not one per pair)
  const CHUNK = 256;
  for (let r0 = 0; r0 < n; r0 += CHUNK) {
    const r1 = Math.min(n, r0 + CHUNK);
    for (let a = 0; a < p; a++) {
      const qa = a * n;
      for (let b = a; b < p; b++) {
        const qb = b * n;
        let s0 = 0;
        let s2 = 0;
        let s3 = 0;
        for (let i = r0; i < r1; i++) {
          const prod = q[qa + i] * q[qb + i];
          s0 += prod * w0[i];
          s2 += prod * w2[i];
          s3 += prod * w3[i];
        }
        g0[b * p + a] += s0;
        g2[b * p + a] += s2;
        g3[b * p + a] += s3;
      }
    }
  }
  for (let a = 0; a < p; a++) {
    for (let b = a + 1; b < p; b++) {
      g0[a * p + b] = g0[b * p + a];
      g2[a * p + b] = g2[b * p + a];
      g3[a * p + b] = g3[b * p + a];
    }
  }
  const hc0 = sandwich(rInverse, g0, p);
  const hc1 = hc0.map((v) => (v * n) / (n - p));
  return { HC0: hc0, HC1: hc1, HC2: sandwich(rInverse, g2, p), HC3: sandwich(rInverse, g3, p) };
}

/** A G Aᵀ for A = R⁻¹ upper triangular (p×p column-major), G symmetric. */
function sandwich(a: Float64Array, g: Float64Array, p: number): Float64Array {
  const ag = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let k = i; k < p; k++) s += a[k * p + i] * g[j * p + k];
      ag[j * p + i] = s;
    }
  }
  const out = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let k = j; k < p; k++) s += ag[k * p + i] * a[k * p + j];
      out[j * p + i] = s;
    }
  }
  return out;
}

/**
 * Partial (component-plus-residual) residuals per term (Larsen and McCleary 1972): the term's
 * contribution Σ_{c∈term} b_c x_c, centred on its mean over the rows used, plus e.
 */
export function partialResiduals(
  x: Float64Array,
  n: number,
  termColumns: readonly (readonly number[])[],
  coefficients: Float64Array,
  residuals: Float64Array,
): Float64Array[] {
  return termColumns.map((cols) => {
    const values = new Float64Array(n);
    let sum = 0;
    if (cols.length === 1) {
      const b = coefficients[cols[0]];
      const off = cols[0] * n;
      for (let i = 0; i < n; i++) {
        const v = b * x[off + i];
        values[i] = v;
        sum += v;
      }
    } else {
      for (const c of cols) {
        const b = coefficients[c];
        const off = c * n;
        for (let i = 0; i < n; i++) values[i] += b * x[off + i];
      }
      for (let i = 0; i < n; i++) sum += values[i];
    }
    const mean = sum / n;
    for (let i = 0; i < n; i++) values[i] += residuals[i] - mean;
    return values;
  });
}

/**
 * Partial residuals per term from Q and R when the design is no longer held (large-data mode):
 * √W X b restricted to a term's columns is Σₖ Q[:, k] Σ_{j∈term, j≥k} R[k, j] b_j.
 */
export function partialResidualsFromQR(
  fit: LeastSquaresFit,
  termColumns: readonly (readonly number[])[],
): Float64Array[] {
  const { n, p, q, r, coefficients, residuals, sqrtWeights } = fit;
  const terms = termColumns.length;
  // G[k, t] = Σ_{j∈t, j≥k} R[k, j] b_j; the term's weighted contribution is Q G[:, t]
  const g = new Float64Array(p * terms);
  const top = new Int32Array(terms);
  termColumns.forEach((cols, t) => {
    for (const j of cols) {
      for (let k = 0; k <= j; k++) g[t * p + k] += r[j * p + k] * coefficients[j];
      top[t] = Math.max(top[t], j + 1);
    }
  });
  const out = termColumns.map(() => new Float64Array(n));
  const CHUNK = 512;
  for (let r0 = 0; r0 < n; r0 += CHUNK) {
    const r1 = Math.min(n, r0 + CHUNK);
    for (let t = 0; t < terms; t++) {
      const values = out[t];
      const go = t * p;
      const kmax = top[t];
      let k = 0;
      for (; k + 3 < kmax; k += 4) {
        const g0 = g[go + k],
          g1 = g[go + k + 1],
          g2 = g[go + k + 2],
          g3 = g[go + k + 3];
        const o0 = k * n,
          o1 = o0 + n,
          o2 = o1 + n,
          o3 = o2 + n;
        for (let i = r0; i < r1; i++)
          values[i] += q[o0 + i] * g0 + q[o1 + i] * g1 + q[o2 + i] * g2 + q[o3 + i] * g3;
      }
      for (; k < kmax; k++) {
        const gk = g[go + k];
        const o = k * n;
        for (let i = r0; i < r1; i++) values[i] += q[o + i] * gk;
      }
      if (sqrtWeights) for (let i = r0; i < r1; i++) values[i] /= sqrtWeights[i];
    }
  }
  for (const values of out) {
    let sum = 0;
    for (let i = 0; i < n; i++) sum += values[i];
    const mean = sum / n;
    for (let i = 0; i < n; i++) values[i] += residuals[i] - mean;
  }
  return out;
}
