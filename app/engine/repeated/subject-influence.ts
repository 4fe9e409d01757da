/**
 * Influence of each subject's whole set of records: β̂ without the subject by exact deletion
 * with the covariance parameters held at the full-data estimate (Christensen, Pearson and
 * Johnson 1992, "Case-deletion diagnostics for mixed models", Technometrics 34, 38–45):
 *
 *   β̂₍ᵢ₎ = (A − Xᵢ'Vᵢ⁻¹Xᵢ)⁻¹ (b − Xᵢ'Vᵢ⁻¹yᵢ),  A = X'V⁻¹X,  b = X'V⁻¹y,
 *
 * Cook's distance Dᵢ = (β̂ − β̂₍ᵢ₎)' A (β̂ − β̂₍ᵢ₎) / p, and the change in each given contrast
 * (the treatment contrasts at the primary visit), l'(β̂₍ᵢ₎ − β̂). The covariance is not re-estimated
 * without the subject (not a refit); NaN when the design is singular without the subject.
 */
import { cholesky, choleskySolve } from "../survival/symmetric";
import { whitenedDesign, type LikelihoodProblem, type PatternFactor } from "./likelihood";

export interface SubjectInfluence {
  readonly cooksDistance: Float64Array;
  /** Per contrast, the change per subject. */
  readonly contrastChange: Float64Array[];
}

export function subjectInfluence(
  problem: LikelihoodProblem,
  beta: Float64Array,
  betaCovariance: Float64Array,
  factors: readonly PatternFactor[],
  contrasts: readonly Float64Array[],
): SubjectInfluence {
  const { n, p, x, y } = problem;
  // A from its inverse, b = Aβ̂
  const inv = cholesky(betaCovariance, p, 1e-14);
  const a = new Float64Array(p * p);
  if ("l" in inv) {
    const e = new Float64Array(p);
    for (let j = 0; j < p; j++) {
      e.fill(0);
      e[j] = 1;
      const col = choleskySolve(inv.l, p, e);
      for (let i = 0; i < p; i++) a[i * p + j] = col[i];
    }
  }
  const b = new Float64Array(p);
  for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) b[i] += a[i * p + j] * beta[j];
  const count = problem.subjects.length;
  const cooksDistance = new Float64Array(count);
  const contrastChange = contrasts.map(() => new Float64Array(count));
  problem.subjects.forEach((subject, si) => {
    const f = factors[si];
    const u = whitenedDesign(problem, subject.rows, f);
    const ai = Float64Array.from(a);
    const bi = Float64Array.from(b);
    for (let c = 0; c < f.m; c++) {
      const row = subject.rows[c];
      for (let j = 0; j < p; j++) {
        const xj = x[j * n + row];
        bi[j] -= u[c * p + j] * y[row];
        if (xj === 0) continue;
        for (let k = 0; k < p; k++) ai[j * p + k] -= xj * u[c * p + k];
      }
    }
    for (let j = 0; j < p; j++)
      for (let k = 0; k < j; k++) ai[j * p + k] = ai[k * p + j] = 0.5 * (ai[j * p + k] + ai[k * p + j]);
    const fi = cholesky(ai, p, 1e-10);
    if (!("l" in fi)) {
      cooksDistance[si] = NaN;
      contrastChange.forEach((c) => (c[si] = NaN));
      return;
    }
    const bDel = choleskySolve(fi.l, p, bi);
    const d = bDel.map((v, j) => v - beta[j]);
    let q = 0;
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) q += d[i] * a[i * p + j] * d[j];
    cooksDistance[si] = q / p;
    contrasts.forEach((l, ci) => {
      let s = 0;
      for (let j = 0; j < p; j++) s += l[j] * d[j];
      contrastChange[ci][si] = s;
    });
  });
  return { cooksDistance, contrastChange };
}
