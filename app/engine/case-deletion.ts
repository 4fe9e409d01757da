/**
 * Closed-form case deletion for a (weighted) least-squares fit: the coefficients, residual sum
 * of squares and unscaled covariance without a set S of m observations, from the full fit and the
 * deleted rows alone, with no refit (Cook and Weisberg 1982, "Residuals and Influence in
 * Regression", section 3.6; Belsley, Kuh and Welsch 1980, "Regression Diagnostics", section 2.1).
 *
 * With C = (X'WX)⁻¹, X_S the deleted rows of √W X, e_S their weighted residuals √w·e and
 * H_SS = X_S C X_S' (the m×m block of the hat matrix):
 *
 *   b₍₋S₎   = b − C X_S' (I − H_SS)⁻¹ e_S
 *   RSS₍₋S₎ = RSS − e_S' (I − H_SS)⁻¹ e_S
 *   C₍₋S₎   = (X'WX − X_S'X_S)⁻¹ = C + C X_S' (I − H_SS)⁻¹ X_S C      (Woodbury identity)
 *
 * on n − m − p residual degrees of freedom. For m = 1 these reduce to the familiar
 * b − b₍ᵢ₎ = C xᵢ eᵢ/(1 − hᵢ) behind DFBETAS. I − H_SS is factored by Cholesky; a pivot that
 * vanishes means the remaining rows no longer determine every coefficient. Pure and small:
 * it runs in the browser for the what-if panel.
 */
import { tQuantile, tTwoSided } from "./distributions";

/** What the full fit contributes. Matrices are p×p, stored row by row (C is symmetric). */
export interface FullFit {
  readonly n: number;
  readonly p: number;
  readonly coefficients: readonly number[];
  /** (X'WX)⁻¹, p×p row by row. */
  readonly unscaledCovariance: readonly number[];
  /** Σ w e² of the full fit. */
  readonly rss: number;
}

/** One observation to delete: its row of √W X and its weighted residual √w·(y − ŷ). */
export interface DeletedCase {
  readonly x: readonly number[];
  readonly residual: number;
}

export type DeletionOutcome =
  | {
      readonly ok: true;
      readonly m: number;
      readonly coefficients: Float64Array;
      /** (X'WX)⁻¹ without the deleted rows, p×p row by row. */
      readonly unscaledCovariance: Float64Array;
      readonly rss: number;
      readonly dfResidual: number;
      readonly sigma: number;
    }
  | { readonly ok: false; readonly reason: string };

/** Pivots below this (relative to the unit diagonal of I − H_SS) count as zero. */
const PIVOT_TOLERANCE = 1e-10;

/** Cholesky factor (lower, row by row) of a symmetric m×m matrix; null when not positive definite. */
function cholesky(a: Float64Array, m: number): Float64Array | null {
  const g = new Float64Array(m * m);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j <= i; j++) {
      let s = a[i * m + j];
      for (let k = 0; k < j; k++) s -= g[i * m + k] * g[j * m + k];
      if (i === j) {
        if (!(s > PIVOT_TOLERANCE)) return null;
        g[i * m + i] = Math.sqrt(s);
      } else g[i * m + j] = s / g[j * m + j];
    }
  }
  return g;
}

/** Solves G G' z = v in place for the Cholesky factor G. */
function choleskySolve(g: Float64Array, m: number, v: Float64Array): void {
  for (let i = 0; i < m; i++) {
    let s = v[i];
    for (let k = 0; k < i; k++) s -= g[i * m + k] * v[k];
    v[i] = s / g[i * m + i];
  }
  for (let i = m - 1; i >= 0; i--) {
    let s = v[i];
    for (let k = i + 1; k < m; k++) s -= g[k * m + i] * v[k];
    v[i] = s / g[i * m + i];
  }
}

/** The fit without the given cases, in closed form (see the module comment for the formulas). */
export function deleteCases(full: FullFit, cases: readonly DeletedCase[]): DeletionOutcome {
  const { n, p } = full;
  const m = cases.length;
  const c = full.unscaledCovariance;
  const df = n - m - p;
  if (df <= 0)
    return { ok: false, reason: `leaving out ${m} subjects leaves ${n - m} rows for ${p} coefficients` };
  for (const k of cases) {
    if (k.x.length !== p)
      throw new Error(`a deleted case has ${k.x.length} design values; the fit has ${p} coefficients`);
  }
  // U = C X_S' (p×m), H_SS = X_S U (m×m)
  const u = new Float64Array(p * m);
  for (let k = 0; k < m; k++) {
    const x = cases[k].x;
    for (let a = 0; a < p; a++) {
      let s = 0;
      for (let b = 0; b < p; b++) s += c[a * p + b] * x[b];
      u[a * m + k] = s;
    }
  }
  const iMinusH = new Float64Array(m * m);
  for (let k = 0; k < m; k++) {
    const x = cases[k].x;
    for (let l = 0; l <= k; l++) {
      let s = 0;
      for (let a = 0; a < p; a++) s += x[a] * u[a * m + l];
      const v = (k === l ? 1 : 0) - s;
      iMinusH[k * m + l] = v;
      iMinusH[l * m + k] = v;
    }
  }
  const g = cholesky(iMinusH, m);
  if (!g) {
    return {
      ok: false,
      reason:
        "without these subjects the remaining rows no longer determine every coefficient (for example an arm or a level left without subjects)",
    };
  }
  // z = (I − H_SS)⁻¹ e_S
  const z = Float64Array.from(cases, (k) => k.residual);
  choleskySolve(g, m, z);
  const coefficients = Float64Array.from(full.coefficients);
  for (let a = 0; a < p; a++) {
    let s = 0;
    for (let k = 0; k < m; k++) s += u[a * m + k] * z[k];
    coefficients[a] -= s;
  }
  let drop = 0;
  for (let k = 0; k < m; k++) drop += cases[k].residual * z[k];
  const rss = Math.max(0, full.rss - drop);
  // C₍₋S₎ = C + U (I − H_SS)⁻¹ U'
  const cov = Float64Array.from(c);
  const w = new Float64Array(m);
  for (let a = 0; a < p; a++) {
    for (let k = 0; k < m; k++) w[k] = u[a * m + k];
    choleskySolve(g, m, w);
    for (let b = a; b < p; b++) {
      let s = 0;
      for (let k = 0; k < m; k++) s += u[b * m + k] * w[k];
      cov[a * p + b] += s;
      if (b !== a) cov[b * p + a] += s;
    }
  }
  return {
    ok: true,
    m,
    coefficients,
    unscaledCovariance: cov,
    rss,
    dfResidual: df,
    sigma: Math.sqrt(rss / df),
  };
}

export interface ContrastEstimate {
  readonly estimate: number;
  readonly se: number;
  readonly lower: number;
  readonly upper: number;
  readonly statistic: number;
  readonly p: number;
  readonly df: number;
}

/** L'b with SE σ̂ √(L'CL), a t interval and two-sided p on the residual df. */
export function contrastOf(
  fit: {
    readonly coefficients: ArrayLike<number>;
    readonly unscaledCovariance: ArrayLike<number>;
    readonly sigma: number;
    readonly dfResidual: number;
  },
  l: readonly number[],
  level = 0.95,
): ContrastEstimate {
  const p = l.length;
  let estimate = 0;
  let quad = 0;
  for (let a = 0; a < p; a++) {
    estimate += l[a] * fit.coefficients[a];
    let s = 0;
    for (let b = 0; b < p; b++) s += fit.unscaledCovariance[a * p + b] * l[b];
    quad += l[a] * s;
  }
  const se = fit.sigma * Math.sqrt(Math.max(0, quad));
  const q = tQuantile(0.5 + level / 2, fit.dfResidual);
  const statistic = estimate / se;
  return {
    estimate,
    se,
    lower: estimate - q * se,
    upper: estimate + q * se,
    statistic,
    p: tTwoSided(statistic, fit.dfResidual),
    df: fit.dfResidual,
  };
}

/** The full fit itself as a deletion outcome of nothing (the what-if's "all subjects" line). */
export function fullFitOutcome(full: FullFit): DeletionOutcome {
  return deleteCases(full, []);
}
