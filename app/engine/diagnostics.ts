/**
 * Observation-level diagnostics from the thin Q and R of √W X, in O(n·p²) without refits
 * (Belsley, Kuh and Welsch 1980, Regression Diagnostics, chapter 2; Cook 1977).
 * With prior weights the scaled quantities use the weighted residual √w·e.
 */
import { numberArray } from "./data";
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
  /**
   * DFBETAS per coefficient: (R⁻¹qᵢ)ⱼ √w e/(1−h) / (σ̂₍ᵢ₎ √((X'WX)⁻¹)ⱼⱼ). Plain arrays, as the
   * result holds them: p·n numbers are the largest part of a result, made once, never copied.
   */
  readonly dfbetas: readonly number[][];
}

/** Leverages above this are treated as 1 (the point fixes its own fitted value). */
const LEVERAGE_ONE = 1 - 10 * Number.EPSILON;

/**
 * Hat-matrix diagonal hᵢ = Σₖ Q²ᵢₖ of rows r0..r1−1 from the thin Q (n×p column-major), four
 * columns of Q per pass over the rows.
 */
function leverageRows(q: Float64Array, n: number, p: number, r0: number, r1: number, h: Float64Array): void {
  let k = 0;
  for (; k + 3 < p; k += 4) {
    const o0 = k * n,
      o1 = o0 + n,
      o2 = o1 + n,
      o3 = o2 + n;
    for (let i = r0; i < r1; i++) {
      const a = q[o0 + i],
        b = q[o1 + i],
        c = q[o2 + i],
        d = q[o3 + i];
      h[i] += a * a + b * b + c * c + d * d;
    }
  }
  for (; k < p; k++) {
    const off = k * n;
    for (let i = r0; i < r1; i++) h[i] += q[off + i] * q[off + i];
  }
  for (let i = r0; i < r1; i++) if (h[i] > LEVERAGE_ONE) h[i] = 1;
}

/** The heteroscedasticity-consistent covariance types. */
export type RobustType = "HC0" | "HC1" | "HC2" | "HC3";

/** Robust covariances: every type's diagonal, and the full matrix of the types asked for. */
export interface RobustCovarianceParts {
  /** Diagonal of each type (length p). */
  readonly diagonal: Readonly<Record<RobustType, Float64Array>>;
  /** Full p×p matrices (column-major) of the types asked for. */
  readonly full: Partial<Record<RobustType, Float64Array>>;
}

/**
 * Every observation-level diagnostic of a least-squares fit, and with `robust` the
 * heteroscedasticity-consistent covariances (White 1980; MacKinnon and White 1985; Long and
 * Ervin 2000) from the same pass over Q: with U = Q R⁻ᵀ, HC = U' Ω U for ωᵢ = ẽᵢ²,
 * ẽᵢ²·n/(n−p), ẽᵢ²/(1−hᵢ), ẽᵢ²/(1−hᵢ)², ẽ = √w e. U is what DFBETAS scales, so it is made once,
 * a chunk of rows at a time (never as an n×p array); only the diagonals are summed for the types
 * whose full matrix is not asked for (the standard errors read no more).
 *
 * Q is read from memory once: each chunk of rows makes its leverages, then the per-row
 * quantities, U, DFBETAS and the robust sums while the chunk of Q is in cache. Each step is a
 * small function of its own, which the JavaScript engine optimizes once and keeps (the same
 * loops inside one long function were recompiled and ran unoptimized for part of every fit).
 */
export function observationDiagnostics(
  fit: LeastSquaresFit,
  options: { readonly robust?: { readonly full: readonly RobustType[] } } = {},
): ObservationDiagnostics & { readonly robust?: RobustCovarianceParts } {
  const { n, p, q, rInverse, unscaledCovariance, sigma, dfResidual } = fit;
  const e = fit.weightedResiduals;
  const rows: RowDiagnostics = {
    h: new Float64Array(n),
    internal: new Float64Array(n),
    external: new Float64Array(n),
    deletionSigma: new Float64Array(n),
    cook: new Float64Array(n),
    dffits: new Float64Array(n),
    rowFactor: new Float64Array(n),
  };
  const dfbetas: number[][] = [];
  for (let j = 0; j < p; j++) dfbetas.push(numberArray(n));
  const scale = new Float64Array(p);
  for (let j = 0; j < p; j++) scale[j] = 1 / Math.sqrt(unscaledCovariance[j * p + j]);
  const robust = options.robust;
  // ω of HC0, HC2 and HC3 per row; HC1 is HC0 times n/(n − p)
  const fullTypes = robust
    ? (["HC0", "HC2", "HC3"] as const).filter(
        (t) => robust.full.includes(t) || (t === "HC0" && robust.full.includes("HC1")),
      )
    : [];
  const diag = robust ? [new Float64Array(p), new Float64Array(p), new Float64Array(p)] : [];
  const gram = fullTypes.map(() => new Float64Array(p * p));
  const omega = [new Float64Array(CHUNK), new Float64Array(CHUNK), new Float64Array(CHUNK)];
  // U = Q R⁻ᵀ for a chunk of rows, column j at j·CHUNK
  const u = new Float64Array(p * CHUNK);
  const weighted = new Float64Array(p * CHUNK);
  for (let r0 = 0; r0 < n; r0 += CHUNK) {
    const r1 = Math.min(n, r0 + CHUNK);
    const len = r1 - r0;
    leverageRows(q, n, p, r0, r1, rows.h);
    rowDiagnostics(e, sigma, dfResidual, p, r0, r1, rows);
    influenceRows(q, n, p, rInverse, r0, r1, u);
    // DFBETAS column j = U[:, j] · rowFactor / √Cⱼⱼ
    for (let j = 0; j < p; j++) scaleRows(u, j * CHUNK, rows.rowFactor, scale[j], r0, r1, dfbetas[j]);
    if (!robust) continue;
    robustWeights(e, rows.h, r0, r1, omega[0], omega[1], omega[2]);
    addWeightedSquares(u, p, len, omega[0], omega[1], omega[2], diag[0], diag[1], diag[2]);
    fullTypes.forEach((type, t) => {
      const w = omega[type === "HC0" ? 0 : type === "HC2" ? 1 : 2];
      weightRows(u, p, len, w, weighted);
      addCrossProducts(weighted, u, p, len, gram[t]);
    });
  }
  return {
    leverage: rows.h,
    studentizedInternal: rows.internal,
    studentizedExternal: rows.external,
    deletionSigma: rows.deletionSigma,
    cooksDistance: rows.cook,
    dffits: rows.dffits,
    dfbetas,
    ...(robust ? { robust: robustParts(diag, fullTypes, gram, n, p) } : {}),
  };
}

/** Rows per chunk of the pass that makes U = Q R⁻ᵀ (p columns of it stay in cache). */
const CHUNK = 256;

/** The per-row arrays of observationDiagnostics, and DFBETAS' row factor √w e / ((1 − h) σ̂₍ᵢ₎). */
interface RowDiagnostics {
  readonly h: Float64Array;
  readonly internal: Float64Array;
  readonly external: Float64Array;
  readonly deletionSigma: Float64Array;
  readonly cook: Float64Array;
  readonly dffits: Float64Array;
  readonly rowFactor: Float64Array;
}

/** Studentized residuals, deletion σ̂, Cook's distance, DFFITS and DFBETAS' row factor for rows r0..r1−1 (h made). */
function rowDiagnostics(
  e: Float64Array,
  sigma: number,
  dfResidual: number,
  p: number,
  r0: number,
  r1: number,
  out: RowDiagnostics,
): void {
  const { h, internal, external, deletionSigma, cook, dffits, rowFactor } = out;
  const rssTotal = dfResidual * sigma * sigma;
  for (let i = r0; i < r1; i++) {
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
}

/**
 * U = Q R⁻ᵀ for rows r0..r1−1, column j at j·CHUNK: U[:, j] = Σ_{k≥j} Q[:, k] R⁻¹[j, k], four
 * columns of Q per pass; the chunk of Q stays in cache while every column of U is made.
 */
function influenceRows(
  q: Float64Array,
  n: number,
  p: number,
  rInverse: Float64Array,
  r0: number,
  r1: number,
  u: Float64Array,
): void {
  u.fill(0);
  for (let j = 0; j < p; j++) {
    const uo = j * CHUNK - r0;
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
        u[uo + i] += q[o0 + i] * c0 + q[o1 + i] * c1 + q[o2 + i] * c2 + q[o3 + i] * c3;
    }
    for (; k < p; k++) {
      const c = rInverse[k * p + j];
      const off = k * n;
      for (let i = r0; i < r1; i++) u[uo + i] += q[off + i] * c;
    }
  }
}

/** out[i] = U[i, ·] at `uo` · (rowFactor[i] · s) for rows r0..r1−1. */
function scaleRows(
  u: Float64Array,
  uo: number,
  rowFactor: Float64Array,
  s: number,
  r0: number,
  r1: number,
  out: number[],
): void {
  const shift = uo - r0;
  for (let i = r0; i < r1; i++) out[i] = u[shift + i] * (rowFactor[i] * s);
}

/** ω of HC0, HC2 and HC3 for rows r0..r1−1, from the chunk's start. */
function robustWeights(
  e: Float64Array,
  h: Float64Array,
  r0: number,
  r1: number,
  w0: Float64Array,
  w2: Float64Array,
  w3: Float64Array,
): void {
  for (let i = r0; i < r1; i++) {
    const e2 = e[i] * e[i];
    const m = 1 - h[i];
    w0[i - r0] = e2;
    w2[i - r0] = e2 / m;
    w3[i - r0] = e2 / (m * m);
  }
}

/** dₜ[j] += Σᵢ U[i, j]² ωₜ[i] over a chunk, for the three weightings. */
function addWeightedSquares(
  u: Float64Array,
  p: number,
  len: number,
  w0: Float64Array,
  w2: Float64Array,
  w3: Float64Array,
  diag0: Float64Array,
  diag2: Float64Array,
  diag3: Float64Array,
): void {
  for (let j = 0; j < p; j++) {
    const uo = j * CHUNK;
    let d0 = 0;
    let d2 = 0;
    let d3 = 0;
    for (let i = 0; i < len; i++) {
      const v = u[uo + i] * u[uo + i];
      d0 += v * w0[i];
      d2 += v * w2[i];
      d3 += v * w3[i];
    }
    diag0[j] += d0;
    diag2[j] += d2;
    diag3[j] += d3;
  }
}

/** out[i, j] = U[i, j] ω[i] over a chunk. */
function weightRows(u: Float64Array, p: number, len: number, w: Float64Array, out: Float64Array): void {
  for (let j = 0; j < p; j++) {
    const uo = j * CHUNK;
    for (let i = 0; i < len; i++) out[uo + i] = u[uo + i] * w[i];
  }
}

/** G[a, b] += Σᵢ A[i, a] B[i, b] for b ≥ a over a chunk (columns at a·CHUNK), four columns of B at a time. */
function addCrossProducts(a: Float64Array, b: Float64Array, p: number, len: number, g: Float64Array): void {
  for (let x = 0; x < p; x++) {
    const ao = x * CHUNK;
    let y = x;
    for (; y + 3 < p; y += 4) {
      const b0 = y * CHUNK;
      const b1 = b0 + CHUNK;
      const b2 = b1 + CHUNK;
      const b3 = b2 + CHUNK;
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      for (let i = 0; i < len; i++) {
        const v = a[ao + i];
        s0 += v * b[b0 + i];
        s1 += v * b[b1 + i];
        s2 += v * b[b2 + i];
        s3 += v * b[b3 + i];
      }
      g[y * p + x] += s0;
      g[(y + 1) * p + x] += s1;
      g[(y + 2) * p + x] += s2;
      g[(y + 3) * p + x] += s3;
    }
    for (; y < p; y++) {
      const bo = y * CHUNK;
      let s = 0;
      for (let i = 0; i < len; i++) s += a[ao + i] * b[bo + i];
      g[y * p + x] += s;
    }
  }
}

/** The diagonals and asked-for full matrices (upper triangles mirrored) as RobustCovarianceParts. */
function robustParts(
  diag: readonly Float64Array[],
  fullTypes: readonly ("HC0" | "HC2" | "HC3")[],
  gram: readonly Float64Array[],
  n: number,
  p: number,
): RobustCovarianceParts {
  const full: Partial<Record<RobustType, Float64Array>> = {};
  fullTypes.forEach((type, t) => {
    const g = gram[t];
    for (let a = 0; a < p; a++) for (let b = a + 1; b < p; b++) g[a * p + b] = g[b * p + a];
    full[type] = g;
  });
  const hc1Factor = n / (n - p);
  if (full.HC0) full.HC1 = full.HC0.map((v) => v * hc1Factor);
  // a full matrix's own diagonal, so that its standard errors and the table's agree to the bit
  const diagonalOf = (type: RobustType, fallback: Float64Array): Float64Array => {
    const m = full[type];
    return m ? Float64Array.from({ length: p }, (_, j) => m[j * p + j]) : fallback;
  };
  return {
    diagonal: {
      HC0: diagonalOf("HC0", diag[0]),
      HC1: diagonalOf(
        "HC1",
        diag[0].map((v) => v * hc1Factor),
      ),
      HC2: diagonalOf("HC2", diag[1]),
      HC3: diagonalOf("HC3", diag[2]),
    },
    full,
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
 * Partial residuals per term as `partialResiduals` computes them, with the design's columns read
 * from `column` (the design's storage held Q), as plain arrays for the result.
 */
export function partialResidualsOfColumns(
  column: (j: number, scratch: Float64Array) => Float64Array,
  n: number,
  termColumns: readonly (readonly number[])[],
  coefficients: Float64Array,
  residuals: Float64Array,
): number[][] {
  const scratch = new Float64Array(n);
  const values = new Float64Array(n);
  return termColumns.map((cols) => {
    let sum = 0;
    if (cols.length === 1) {
      const b = coefficients[cols[0]];
      const x = column(cols[0], scratch);
      for (let i = 0; i < n; i++) {
        const v = b * x[i];
        values[i] = v;
        sum += v;
      }
    } else {
      values.fill(0);
      for (const c of cols) {
        const b = coefficients[c];
        const x = column(c, scratch);
        for (let i = 0; i < n; i++) values[i] += b * x[i];
      }
      for (let i = 0; i < n; i++) sum += values[i];
    }
    const mean = sum / n;
    const out = numberArray(n);
    for (let i = 0; i < n; i++) out[i] = values[i] + (residuals[i] - mean);
    return out;
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
