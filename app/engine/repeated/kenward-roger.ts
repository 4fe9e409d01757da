/**
 * Kenward–Roger inference (Kenward and Roger 1997, "Small sample inference for fixed effects
 * from restricted maximum likelihood", Biometrics 53, 983–997) for covariance structures that are
 * linear in their parameters, Σ = Σₖ σₖ Bₖ (unstructured, compound symmetry, Toeplitz), where
 * the second-derivative term Rᵢⱼ vanishes:
 *
 *   Φ = (X'V⁻¹X)⁻¹, Pᵢ = −X'V⁻¹BᵢV⁻¹X, Qᵢⱼ = X'V⁻¹BᵢV⁻¹BⱼV⁻¹X,
 *   W = 2 [tr(ΠBᵢΠBⱼ)]⁻¹ (inverse expected information, Π the REML projection),
 *   Φ_A = Φ + 2Φ [Σᵢⱼ Wᵢⱼ (Qᵢⱼ − PᵢΦPⱼ)] Φ,
 *
 * and for Lβ (q rows) the scaled F = λ/q (Lβ̂)'(LΦ_AL')⁻¹(Lβ̂) on q and m df, with A₁, A₂, B, g,
 * c₁…c₃, E*, V*, ρ, m and λ of the paper's section 4. Compared with pbkrtest on an lme4 random-
 * intercept fit, which is the compound-symmetry model (tests/reference/repeated-reference.test.ts).
 */
import { cholesky, choleskyInverse } from "../survival/symmetric";
import { fUpper } from "../distributions";
import type { CovarianceFit } from "./covariance-fit";
import { whitenedDesign, type LikelihoodProblem } from "./likelihood";
import type { CovarianceStructureName } from "./repeated-spec";
import type { FTestResult } from "./satterthwaite";

/** Basis matrices (t×t, row-major) of a structure linear in its parameters; null for the others. */
export function linearBasis(structure: CovarianceStructureName, t: number): Float64Array[] | null {
  const band = (lag: number) => {
    const m = new Float64Array(t * t);
    for (let a = 0; a < t; a++) for (let b = 0; b < t; b++) if (Math.abs(a - b) === lag) m[a * t + b] = 1;
    return m;
  };
  if (structure === "unstructured") {
    const out: Float64Array[] = [];
    for (let a = 0; a < t; a++) {
      for (let b = 0; b <= a; b++) {
        const m = new Float64Array(t * t);
        m[a * t + b] = 1;
        m[b * t + a] = 1;
        out.push(m);
      }
    }
    return out;
  }
  if (structure === "compound-symmetry") return [band(0), new Float64Array(t * t).fill(1)];
  if (structure === "toeplitz") return Array.from({ length: t }, (_, lag) => band(lag));
  return null;
}

export interface KenwardRoger {
  /** Φ_A, row-major p×p. */
  readonly adjustedCovariance: Float64Array;
  /** Denominator df of Lβ (rows of L). */
  df(rows: readonly Float64Array[]): number;
  fTest(rows: readonly Float64Array[], beta: Float64Array): FTestResult;
}

const mul = (a: Float64Array, b: Float64Array, r: number, k: number, c: number) => {
  const out = new Float64Array(r * c);
  for (let i = 0; i < r; i++)
    for (let l = 0; l < k; l++) {
      const v = a[i * k + l];
      if (v === 0) continue;
      for (let j = 0; j < c; j++) out[i * c + j] += v * b[l * c + j];
    }
  return out;
};
const transpose = (a: Float64Array, r: number, c: number) => {
  const out = new Float64Array(r * c);
  for (let i = 0; i < r; i++) for (let j = 0; j < c; j++) out[j * r + i] = a[i * c + j];
  return out;
};
const trace = (a: Float64Array, n: number) => {
  let s = 0;
  for (let i = 0; i < n; i++) s += a[i * n + i];
  return s;
};

export function kenwardRoger(
  problem: LikelihoodProblem,
  fit: CovarianceFit,
  basis: readonly Float64Array[],
): KenwardRoger {
  const { t, p } = problem;
  const k = basis.length;
  const phi = fit.likelihood.betaCovariance;
  const pMat = basis.map(() => new Float64Array(p * p));
  const qMat = Array.from({ length: k * k }, () => new Float64Array(p * p));
  const kTrace = new Float64Array(k * k);
  problem.subjects.forEach((subject, si) => {
    const f = fit.likelihood.factors[si];
    const m = f.m;
    const u = whitenedDesign(problem, subject.rows, f);
    const sub = basis.map((bk) => {
      const s = new Float64Array(m * m);
      for (let a = 0; a < m; a++)
        for (let b = 0; b < m; b++) s[a * m + b] = bk[subject.positions[a] * t + subject.positions[b]];
      return s;
    });
    const h = sub.map((s) => mul(s, f.inverse, m, m, m)); // Bₖ V⁻¹
    const o = sub.map((s) => mul(s, u, m, m, p)); // Bₖ V⁻¹ X
    const ut = transpose(u, m, p);
    for (let i = 0; i < k; i++) {
      const pi = mul(ut, o[i], p, m, p);
      for (let x = 0; x < p * p; x++) pMat[i][x] -= pi[x];
      const oti = transpose(o[i], m, p);
      const otiVinv = mul(oti, f.inverse, p, m, m);
      for (let j = 0; j < k; j++) {
        const q = mul(otiVinv, o[j], p, m, p);
        const target = qMat[i * k + j];
        for (let x = 0; x < p * p; x++) target[x] += q[x];
        kTrace[i * k + j] += trace(mul(h[i], h[j], m, m, m), m);
      }
    }
  });
  const ie2 = new Float64Array(k * k);
  const phiP = pMat.map((pi) => mul(phi, pi, p, p, p));
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      let cq = 0;
      const q = qMat[i * k + j];
      for (let x = 0; x < p * p; x++) cq += phi[x] * q[x];
      ie2[i * k + j] = kTrace[i * k + j] - 2 * cq + trace(mul(phiP[i], phiP[j], p, p, p), p);
    }
  }
  const fi = cholesky(ie2, k, 1e-12);
  if (!("l" in fi)) throw new Error("the expected information of the covariance parameters is singular");
  const w = choleskyInverse(fi.l, k).map((v) => 2 * v);
  const uu = new Float64Array(p * p);
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      const pp = mul(mul(pMat[i], phi, p, p, p), pMat[j], p, p, p);
      const q = qMat[i * k + j];
      for (let x = 0; x < p * p; x++) uu[x] += w[i * k + j] * (q[x] - pp[x]);
    }
  }
  const adjusted = mul(mul(phi, uu, p, p, p), phi, p, p, p).map((v, x) => phi[x] + 2 * v);
  for (let i = 0; i < p; i++)
    for (let j = 0; j < i; j++)
      adjusted[i * p + j] = adjusted[j * p + i] = 0.5 * (adjusted[i * p + j] + adjusted[j * p + i]);

  const lMatrix = (rows: readonly Float64Array[]) => {
    const l = new Float64Array(rows.length * p);
    rows.forEach((r, a) => l.set(r, a * p));
    return l;
  };
  const inverseOf = (a: Float64Array, n: number) => {
    const c = cholesky(a, n, 1e-14);
    return "l" in c ? choleskyInverse(c.l, n) : null;
  };
  /** m and λ of section 4 for the rows of L. */
  const scaling = (rows: readonly Float64Array[]) => {
    const q = rows.length;
    const l = lMatrix(rows);
    const lt = transpose(l, q, p);
    const middle = inverseOf(mul(mul(l, phi, q, p, p), lt, q, p, q), q);
    if (!middle) return { m: NaN, lambda: NaN };
    const theta = mul(mul(lt, middle, p, q, q), l, p, q, p);
    const thetaPhi = mul(theta, phi, p, p, p);
    const uMat = pMat.map((pi) => mul(mul(thetaPhi, pi, p, p, p), phi, p, p, p));
    const traces = uMat.map((x) => trace(x, p));
    let a1 = 0;
    let a2 = 0;
    for (let i = 0; i < k; i++) {
      for (let j = 0; j < k; j++) {
        a1 += w[i * k + j] * traces[i] * traces[j];
        a2 += w[i * k + j] * trace(mul(uMat[i], uMat[j], p, p, p), p);
      }
    }
    const b = (a1 + 6 * a2) / (2 * q);
    const g = ((q + 1) * a1 - (q + 4) * a2) / ((q + 2) * a2);
    const d = 3 * q + 2 * (1 - g);
    const c1 = g / d;
    const c2 = (q - g) / d;
    const c3 = (q + 2 - g) / d;
    const eStar = 1 / (1 - a2 / q);
    const vStar = (2 / q) * ((1 + c1 * b) / ((1 - c2 * b) ** 2 * (1 - c3 * b)));
    const rho = vStar / (2 * eStar * eStar);
    const m = 4 + (q + 2) / (q * rho - 1);
    return { m, lambda: m / (eStar * (m - 2)) };
  };

  return {
    adjustedCovariance: adjusted,
    df: (rows) => scaling(rows).m,
    fTest(rows, beta) {
      const q = rows.length;
      const l = lMatrix(rows);
      const inv = inverseOf(mul(mul(l, adjusted, q, p, p), transpose(l, q, p), q, p, q), q);
      const lb = mul(l, beta, q, p, 1);
      let wald = NaN;
      if (inv) {
        wald = 0;
        for (let a = 0; a < q; a++) for (let c = 0; c < q; c++) wald += lb[a] * inv[a * q + c] * lb[c];
      }
      const { m, lambda } = scaling(rows);
      const statistic = (lambda * wald) / q;
      return { statistic, numeratorDf: q, denominatorDf: m, p: fUpper(statistic, q, m) };
    },
  };
}
