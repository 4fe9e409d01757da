/**
 * Satterthwaite degrees of freedom for linear functions of β̂ (Satterthwaite 1946; Giesbrecht and
 * Burns 1985, Biometrics 41, 477–486): for l'β̂ with variance v(θ) = l'C(θ)l, C = (X'V⁻¹X)⁻¹,
 *
 *   df = 2 v² / (∇v' W ∇v),  W = (−H)⁻¹,  ∂C/∂θₖ = C (Σᵢ Uᵢ' ∂Vᵢ/∂θₖ Uᵢ) C,  Uᵢ = Vᵢ⁻¹Xᵢ,
 *
 * with H the Hessian of the fit's log-likelihood (REML or ML) in the covariance parameters at the
 * estimate: the observed information, as emmeans uses for gls fits (nlme's apVar). The value
 * does not depend on how θ is parameterized. An F test of q rows L uses the method of
 * Fai and Cornelius (1996, J. Statist. Comput. Simul. 54, 363–378): the eigenvectors of LCL'
 * give q one-degree-of-freedom parts with Satterthwaite df νₘ, E = Σ νₘ/(νₘ − 2), and the
 * denominator df 2E/(E − q) (undefined when E ≤ q or some νₘ ≤ 2).
 */
import { cholesky, choleskyInverse } from "../survival/symmetric";
import { fUpper } from "../distributions";
import { sigmaDerivatives, STRUCTURES } from "./covariance-structures";
import type { CovarianceFit } from "./covariance-fit";
import { whitenedDesign, type LikelihoodProblem } from "./likelihood";
import { symmetricEigen } from "./symmetric-eigen";

export interface SatterthwaiteContext {
  /** Degrees of freedom of l'β̂. */
  df(l: ArrayLike<number>): number;
}

export interface FTestResult {
  readonly statistic: number;
  readonly numeratorDf: number;
  readonly denominatorDf: number;
  readonly p: number;
}

export function satterthwaite(problem: LikelihoodProblem, fit: CovarianceFit): SatterthwaiteContext {
  const { t, p } = problem;
  const c = fit.likelihood.betaCovariance;
  const k = fit.theta.length;
  const negH = fit.hessian.map((v) => -v);
  const fh = cholesky(negH, k, 1e-14);
  const w = "l" in fh ? choleskyInverse(fh.l, k) : null;

  // S_ab = Σᵢ Σ_{c at a, d at b} u_c u_d' (p×p for each pair of visit positions)
  const s = new Float64Array(t * t * p * p);
  problem.subjects.forEach((subject, i) => {
    const f = fit.likelihood.factors[i];
    const u = whitenedDesign(problem, subject.rows, f);
    const m = f.m;
    for (let a = 0; a < m; a++) {
      for (let b = 0; b < m; b++) {
        const base = (subject.positions[a] * t + subject.positions[b]) * p * p;
        for (let j = 0; j < p; j++) {
          const uj = u[a * p + j];
          if (uj === 0) continue;
          for (let l = 0; l < p; l++) s[base + j * p + l] += uj * u[b * p + l];
        }
      }
    }
  });
  const dSigma = sigmaDerivatives(STRUCTURES[fit.structure], fit.theta, t);
  // ∂C/∂θₖ = C Qₖ C
  const dC = dSigma.map((ds) => {
    const q = new Float64Array(p * p);
    for (let ab = 0; ab < t * t; ab++) {
      const v = ds[ab];
      if (v === 0) continue;
      const base = ab * p * p;
      for (let i = 0; i < p * p; i++) q[i] += v * s[base + i];
    }
    return multiply(multiply(c, q, p), c, p);
  });

  return {
    df(l) {
      if (!w) return NaN;
      let v = 0;
      for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) v += l[i] * c[i * p + j] * l[j];
      const g = dC.map((d) => {
        let x = 0;
        for (let i = 0; i < p; i++) {
          if (l[i] === 0) continue;
          for (let j = 0; j < p; j++) x += l[i] * d[i * p + j] * l[j];
        }
        return x;
      });
      let denom = 0;
      for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) denom += g[a] * w[a * k + b] * g[b];
      return (2 * v * v) / denom;
    },
  };
}

function multiply(a: Float64Array, b: Float64Array, p: number): Float64Array {
  const out = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    for (let k = 0; k < p; k++) {
      const aik = a[i * p + k];
      if (aik === 0) continue;
      for (let j = 0; j < p; j++) out[i * p + j] += aik * b[k * p + j];
    }
  }
  return out;
}

/** How the denominator df of an F test is found: Satterthwaite per direction, or one fixed df. */
export type DenominatorDf =
  | { readonly kind: "satterthwaite"; readonly df: (l: Float64Array) => number }
  | { readonly kind: "residual"; readonly df: number };

/** F test of Lβ = 0 (rows of L). */
export function fTest(
  rows: readonly Float64Array[],
  beta: Float64Array,
  c: Float64Array,
  method: DenominatorDf,
): FTestResult {
  const p = beta.length;
  const q = rows.length;
  const m = new Float64Array(q * q);
  for (let a = 0; a < q; a++) {
    for (let b = 0; b < q; b++) {
      let v = 0;
      for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) v += rows[a][i] * c[i * p + j] * rows[b][j];
      m[a * q + b] = v;
    }
  }
  const { values, vectors } = symmetricEigen(m, q);
  let statistic = 0;
  let e = 0;
  let allAbove = true;
  for (let r = 0; r < q; r++) {
    const l = new Float64Array(p);
    for (let a = 0; a < q; a++) for (let i = 0; i < p; i++) l[i] += vectors[a * q + r] * rows[a][i];
    let est = 0;
    for (let i = 0; i < p; i++) est += l[i] * beta[i];
    statistic += (est * est) / values[r];
    if (method.kind === "satterthwaite") {
      const nu = method.df(l);
      if (nu > 2) e += nu / (nu - 2);
      else allAbove = false;
    }
  }
  statistic /= q;
  const denominatorDf =
    method.kind === "residual"
      ? method.df
      : q === 1
        ? method.df(rows[0])
        : allAbove && e > q
          ? (2 * e) / (e - q)
          : NaN;
  return { statistic, numeratorDf: q, denominatorDf, p: fUpper(statistic, q, denominatorDf) };
}
