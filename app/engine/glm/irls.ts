/**
 * Iteratively reweighted least squares for generalized linear models (Nelder and Wedderburn
 * 1972; Green 1984), each step a weighted least-squares fit through the same Householder QR as
 * the linear model. Step-halving when the deviance rises or is not finite; convergence when the
 * relative change in deviance, |D − D_old| / (|D| + 0.1), falls below 1e-10.
 */
import { leastSquares, type LeastSquaresFit } from "../least-squares";
import type { GlmFamily, LinkFunctions } from "./families";

export interface IrlsInput {
  readonly x: Float64Array;
  readonly n: number;
  readonly p: number;
  readonly y: Float64Array;
  /** Prior weights (or null). */
  readonly weights: Float64Array | null;
  readonly offset: Float64Array | null;
  readonly family: GlmFamily;
  readonly link: LinkFunctions;
  /** Starting coefficients (warm start), optional. */
  readonly start?: Float64Array;
  readonly maxIterations?: number;
  readonly tolerance?: number;
}

export interface IrlsFit {
  readonly coefficients: Float64Array;
  readonly eta: Float64Array;
  readonly mu: Float64Array;
  /** Working weights w·(dμ/dη)²/V(μ) at convergence. */
  readonly workingWeights: Float64Array;
  /** Working response z = η − offset + (y − μ)/(dμ/dη). */
  readonly working: Float64Array;
  readonly deviance: number;
  readonly iterations: number;
  readonly converged: boolean;
  /** Coefficient vectors of the last two iterations (for the separation check). */
  readonly previousCoefficients: Float64Array;
  /** Weighted least-squares fit of the last iteration (Q, R of W^½X). */
  readonly weighted: LeastSquaresFit;
  readonly aliased: readonly number[];
}

export const IRLS_TOLERANCE = 1e-10;
export const IRLS_MAX_ITERATIONS = 100;

function deviance(input: IrlsInput, mu: Float64Array): number {
  let d = 0;
  for (let i = 0; i < input.n; i++)
    d += input.family.deviance(input.y[i], mu[i], input.weights ? input.weights[i] : 1);
  return d;
}

function linearPredictor(input: IrlsInput, b: Float64Array): Float64Array {
  const { x, n, p } = input;
  const eta = new Float64Array(n);
  for (let j = 0; j < p; j++) {
    const bj = b[j];
    const off = j * n;
    for (let i = 0; i < n; i++) eta[i] += x[off + i] * bj;
  }
  if (input.offset) for (let i = 0; i < n; i++) eta[i] += input.offset[i];
  return eta;
}

/** Fits a GLM by IRLS. */
export function irls(input: IrlsInput): IrlsFit {
  const { n, p, y, family, link } = input;
  const tol = input.tolerance ?? IRLS_TOLERANCE;
  const maxIter = input.maxIterations ?? IRLS_MAX_ITERATIONS;
  const pw = input.weights;
  let eta: Float64Array;
  let mu: Float64Array;
  if (input.start) {
    eta = linearPredictor(input, input.start);
    mu = eta.map((e) => link.inverse(e));
  } else {
    mu = new Float64Array(n);
    for (let i = 0; i < n; i++) mu[i] = family.start(y[i], pw ? pw[i] : 1);
    eta = mu.map((m) => link.link(m));
  }
  let devOld = deviance(input, mu);
  let b: Float64Array = new Float64Array(p);
  let bOld: Float64Array = new Float64Array(p);
  let haveB = false;
  let converged = false;
  let iterations = 0;
  let last: LeastSquaresFit | null = null;
  const z = new Float64Array(n);
  const w = new Float64Array(n);
  for (let iter = 1; iter <= maxIter; iter++) {
    iterations = iter;
    for (let i = 0; i < n; i++) {
      const d = link.derivative(eta[i]);
      const off = input.offset ? input.offset[i] : 0;
      z[i] = eta[i] - off + (y[i] - mu[i]) / d;
      w[i] = ((pw ? pw[i] : 1) * d * d) / family.variance(mu[i]);
    }
    const outcome = leastSquares({ x: input.x, n, p, y: z, weights: w });
    if (!outcome.ok) {
      return {
        coefficients: b,
        eta,
        mu,
        workingWeights: w,
        working: z,
        deviance: devOld,
        iterations,
        converged: false,
        previousCoefficients: bOld,
        weighted: last as LeastSquaresFit,
        aliased: outcome.aliased,
      };
    }
    let bNew: Float64Array = new Float64Array(outcome.fit.coefficients);
    let etaNew = linearPredictor(input, bNew);
    let muNew = etaNew.map((e) => link.inverse(e));
    let dev = deviance(input, muNew);
    // step-halving while the deviance is not finite or rises (after the first step)
    for (
      let halving = 0;
      haveB && (!Number.isFinite(dev) || dev > devOld + 1e-12 * Math.abs(devOld)) && halving < 30;
      halving++
    ) {
      bNew = bNew.map((v, j) => (v + b[j]) / 2);
      etaNew = linearPredictor(input, bNew);
      muNew = etaNew.map((e) => link.inverse(e));
      dev = deviance(input, muNew);
    }
    bOld = b;
    b = bNew;
    haveB = true;
    eta = etaNew;
    mu = muNew;
    last = outcome.fit;
    // converged on the relative deviance change; for links that are not canonical Fisher scoring
    // converges only linearly, so the coefficients must also have settled
    let stepMax = 0;
    let sizeMax = 0;
    for (let j = 0; j < p; j++) {
      stepMax = Math.max(stepMax, Math.abs(b[j] - bOld[j]));
      sizeMax = Math.max(sizeMax, Math.abs(b[j]));
    }
    if (
      Math.abs(dev - devOld) / (Math.abs(dev) + 0.1) < tol &&
      (stepMax <= 1e-11 * (sizeMax + 0.1) || iter === maxIter)
    ) {
      devOld = dev;
      converged = true;
      break;
    }
    devOld = dev;
  }
  // weights and working response at the final estimates, and the weighted QR there
  for (let i = 0; i < n; i++) {
    const d = link.derivative(eta[i]);
    const off = input.offset ? input.offset[i] : 0;
    z[i] = eta[i] - off + (y[i] - mu[i]) / d;
    w[i] = ((pw ? pw[i] : 1) * d * d) / family.variance(mu[i]);
  }
  const final = leastSquares({ x: input.x, n, p, y: z, weights: w });
  const weighted = final.ok ? final.fit : (last as LeastSquaresFit);
  return {
    coefficients: b,
    eta,
    mu,
    workingWeights: new Float64Array(w),
    working: new Float64Array(z),
    deviance: devOld,
    iterations,
    converged,
    previousCoefficients: bOld,
    weighted,
    aliased: final.ok ? [] : final.aliased,
  };
}
