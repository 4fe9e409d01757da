/**
 * Detection of complete or quasi-complete separation in binary models (Albert and Anderson
 * 1984): the maximum-likelihood estimate does not exist because a direction d in coefficient
 * space orders the outcomes, (2y − 1)·x'd ≥ 0 for every row. IRLS then drives the estimates off
 * along d while the deviance settles (Lesaffre and Albert 1989); we take d from the last IRLS
 * step, check the ordering condition, and confirm that the deviance does not rise along d.
 */
import type { GlmFamily, LinkFunctions } from "./families";
import type { IrlsFit } from "./irls";

export interface SeparationFinding {
  readonly kind: "complete" | "quasi-complete";
  /** Coefficients whose estimates diverge. */
  readonly coefficients: readonly number[];
  /** Rows whose fitted probability is numerically 0 or 1. */
  readonly boundaryRows: number;
}

export function detectSeparation(
  fit: IrlsFit,
  x: Float64Array,
  n: number,
  p: number,
  y: Float64Array,
  offset: Float64Array | null,
  family: GlmFamily,
  link: LinkFunctions,
): SeparationFinding | null {
  let boundary = 0;
  for (let i = 0; i < n; i++) if (fit.mu[i] < 1e-8 || fit.mu[i] > 1 - 1e-8) boundary++;
  if (boundary === 0) return null;
  const d = fit.coefficients.map((v, j) => v - fit.previousCoefficients[j]);
  const dMax = Math.max(...d.map(Math.abs));
  const bMax = Math.max(...fit.coefficients.map(Math.abs));
  if (!(dMax > 1e-6 * (1 + bMax))) return null;
  const xd = new Float64Array(n);
  for (let j = 0; j < p; j++) for (let i = 0; i < n; i++) xd[i] += x[j * n + i] * d[j];
  const scale = Math.max(...Array.from(xd, Math.abs));
  let strict = 0;
  for (let i = 0; i < n; i++) {
    const s = (2 * y[i] - 1) * xd[i];
    if (s < -1e-3 * scale) return null;
    if (s > 1e-3 * scale) strict++;
  }
  if (strict === 0) return null;
  // the deviance must not rise when moving further along d
  const devAt = (t: number) => {
    let dev = 0;
    for (let i = 0; i < n; i++) {
      let eta = offset ? offset[i] : 0;
      for (let j = 0; j < p; j++) eta += x[j * n + i] * (fit.coefficients[j] + t * d[j]);
      dev += family.deviance(y[i], link.inverse(eta), 1);
    }
    return dev;
  };
  if (devAt(4) > devAt(0) + 1e-8 * (1 + fit.deviance)) return null;
  const coefficients: number[] = [];
  for (let j = 0; j < p; j++) if (Math.abs(d[j]) > 1e-2 * dMax) coefficients.push(j);
  return { kind: strict === n ? "complete" : "quasi-complete", coefficients, boundaryRows: boundary };
}
