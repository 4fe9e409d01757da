/**
 * Covariate-adjusted marginal (unconditional) treatment effects by standardization
 * (g-computation) over the rows used: every row's outcome is predicted with the treatment set to
 * each arm in turn and averaged (FDA 2023, Adjusting for Covariates in Randomized Clinical Trials
 * for Drugs and Biological Products). Standard errors two ways:
 * - delta method with the model-based covariance of the coefficients, covariates held fixed
 *   (Ge, Durham, Meyer, Xie and Flournoy 2011, Drug Information Journal 45, 481–493);
 * - the variance that stays valid when the working model is wrong (Ye, Shao, Yi and Zhao 2023,
 *   "Toward better practice of covariate adjustment in analyzing randomized clinical trials",
 *   Journal of the American Statistical Association 118(544), 2370–2382; the authors and title
 *   were checked against the paper's preprint, the volume and pages are recalled from memory and
 *   were not checked against the paper here):
 *   V_aa = var_a(y − μ̂_a)/π_a + 2 cov_a(y, μ̂_a) − var(μ̂_a),
 *   V_ab = cov_a(y, μ̂_b) + cov_b(y, μ̂_a) − cov(μ̂_a, μ̂_b), all divided by n.
 *   It is valid only when the fitted model's residuals average to zero within each arm, which the
 *   score equations guarantee for a canonical link (logit binomial, log Poisson or quasi-Poisson)
 *   with an intercept, the treatment term and no prior weights. For other links, the negative
 *   binomial (whose log link is not canonical) or weighted fits it is not reported and the result
 *   says why (`robustVariance`).
 * Contrasts against the reference arm, or between every pair of arms (`contrastPairs` in
 * adjusted-means.ts): risk difference, risk ratio and odds ratio for binary endpoints, rate ratio
 * for counts; ratios on the log scale by the delta method. A multiplicity method adjusts the
 * p-values within each measure's family of contrasts.
 */
import {
  designRow,
  type CategoricalVariable,
  type Design,
  type PreparedData,
  type Variable,
} from "../design";
import { normalQuantile, normalUpper } from "../distributions";
import type { LinkFunctions } from "./families";
import { contrastPairs, type ContrastPlan } from "../adjusted-means";
import { adjustPValues } from "../multiplicity";

export interface MarginalMean {
  readonly level: string;
  /** Standardized mean outcome (risk, or expected count). */
  readonly estimate: number;
  readonly se: number;
  readonly lower: number;
  readonly upper: number;
  /** Standard error valid under misspecification (Ye et al. 2023); null where it does not apply. */
  readonly robustSe: number | null;
}

export interface MarginalInterval {
  readonly se: number;
  readonly statistic: number;
  readonly p: number;
  readonly lower: number;
  readonly upper: number;
  /** p adjusted for multiplicity within the measure's family of contrasts (absent without a method). */
  readonly pAdjusted?: number;
}

export interface MarginalContrast extends MarginalInterval {
  readonly measure: "risk difference" | "risk ratio" | "odds ratio" | "rate ratio";
  readonly level: string;
  readonly reference: string;
  readonly estimate: number;
  /** The same contrast with the variance of Ye et al. (2023); null where it does not apply. */
  readonly robust: MarginalInterval | null;
}

/** Whether the variance of Ye et al. applies to this fit, and if not, why. */
export type RobustVarianceApplicability =
  { readonly applies: true } | { readonly applies: false; readonly reason: string };

/**
 * The variance of Ye et al. needs residuals that average to zero within each arm: a canonical
 * link with an intercept (the treatment term is in every model that has a treatment) and no
 * prior weights.
 */
export function robustVarianceApplicability(
  family: string,
  link: string,
  intercept: boolean,
  weighted: boolean,
): RobustVarianceApplicability {
  const canonical =
    (family === "binomial" && link === "logit") ||
    ((family === "poisson" || family === "quasipoisson") && link === "log");
  const why = !canonical
    ? family === "negative-binomial"
      ? "the negative binomial's log link is not its canonical link"
      : `the ${link} link is not the canonical link of the ${family} family`
    : !intercept
      ? "the model has no intercept"
      : weighted
        ? "the fit has prior weights"
        : null;
  if (why === null) return { applies: true };
  return {
    applies: false,
    reason: `The misspecification-robust variance of Ye et al. (2023) does not apply: ${why}, so the residuals need not average to zero within each arm.`,
  };
}

export interface MarginalEffects {
  readonly treatment: string;
  /** Whether the robust (Ye et al.) standard errors are given. */
  readonly robustVariance: RobustVarianceApplicability;
  readonly means: readonly MarginalMean[];
  readonly contrasts: readonly MarginalContrast[];
  readonly contrastSet?: ContrastPlan["set"];
  readonly multiplicity?: ContrastPlan["multiplicity"];
}

const Z = normalQuantile(0.975);

/** Marginal means and contrasts for the model's treatment. */
export function marginalEffects(
  design: Design,
  data: PreparedData,
  treatmentName: string,
  coefficients: Float64Array,
  covariance: Float64Array,
  link: LinkFunctions,
  binary: boolean,
  robustVariance: RobustVarianceApplicability,
  plan: ContrastPlan = { set: "reference", multiplicity: "none" },
): MarginalEffects {
  const treatment = data.variables.get(treatmentName) as CategoricalVariable;
  const { n, p } = design;
  const K = treatment.levels.length;
  const offset = data.offset;
  // counterfactual predictions μ̂_a(i) and the gradients g_a = (1/n) Σ dμ/dη x_i(a)
  const preds: Float64Array[] = [];
  const grads: Float64Array[] = [];
  for (let a = 0; a < K; a++) {
    const mu = new Float64Array(n);
    const g = new Float64Array(p);
    for (let i = 0; i < n; i++) {
      const point = new Map<string, number>();
      for (const v of data.variables.values() as Iterable<Variable>) {
        point.set(v.name, v.kind === "continuous" ? v.values[i] : v.codes[i]);
      }
      point.set(treatmentName, a);
      const row = designRow(design, data.variables, point);
      let eta = offset ? offset[i] : 0;
      for (let j = 0; j < p; j++) eta += row[j] * coefficients[j];
      mu[i] = link.inverse(eta);
      const d = link.derivative(eta);
      for (let j = 0; j < p; j++) g[j] += (d * row[j]) / n;
    }
    preds.push(mu);
    grads.push(g);
  }
  const means = preds.map((mu) => mu.reduce((s, v) => s + v, 0) / n);
  // Ge et al.: G V G'
  const ge = new Float64Array(K * K);
  for (let a = 0; a < K; a++) {
    for (let b = 0; b < K; b++) {
      let s = 0;
      for (let r = 0; r < p; r++)
        for (let c = 0; c < p; c++) s += grads[a][r] * covariance[c * p + r] * grads[b][c];
      ge[a * K + b] = s;
    }
  }
  // Ye et al.
  const y = data.response;
  const arm = treatment.codes;
  const inArm = (a: number) => Array.from({ length: n }, (_, i) => i).filter((i) => arm[i] === a);
  const cov = (u: ArrayLike<number>, v: ArrayLike<number>, idx: number[]) => {
    const m = idx.length;
    let mu = 0;
    let mv = 0;
    for (const i of idx) {
      mu += u[i];
      mv += v[i];
    }
    mu /= m;
    mv /= m;
    let s = 0;
    for (const i of idx) s += (u[i] - mu) * (v[i] - mv);
    return s / (m - 1);
  };
  const all = Array.from({ length: n }, (_, i) => i);
  const ye = new Float64Array(K * K);
  for (let a = 0; a < K; a++) {
    const ia = inArm(a);
    const pi = ia.length / n;
    const resid = new Float64Array(n);
    for (const i of ia) resid[i] = y[i] - preds[a][i];
    ye[a * K + a] =
      (cov(resid, resid, ia) / pi + 2 * cov(y, preds[a], ia) - cov(preds[a], preds[a], all)) / n;
    for (let b = 0; b < K; b++) {
      if (b === a) continue;
      const ib = inArm(b);
      ye[a * K + b] = (cov(y, preds[b], ia) + cov(y, preds[a], ib) - cov(preds[a], preds[b], all)) / n;
    }
  }
  const quad = (v: Float64Array, grad: number[]) => {
    let s = 0;
    for (let a = 0; a < K; a++) for (let b = 0; b < K; b++) s += grad[a] * v[a * K + b] * grad[b];
    return Math.sqrt(s);
  };
  const meanRows: MarginalMean[] = treatment.levels.map((level, a) => {
    const unit = Array.from({ length: K }, (_, b) => (b === a ? 1 : 0));
    const se = quad(ge, unit);
    return {
      level,
      estimate: means[a],
      se,
      lower: means[a] - Z * se,
      upper: means[a] + Z * se,
      robustSe: robustVariance.applies ? quad(ye, unit) : null,
    };
  });
  const raw: MarginalContrast[] = [];
  const interval = (estimate: number, se: number, log: boolean): MarginalInterval => {
    const centre = log ? Math.log(estimate) : estimate;
    const statistic = centre / se;
    const lower = centre - Z * se;
    const upper = centre + Z * se;
    return {
      se,
      statistic,
      p: 2 * normalUpper(Math.abs(statistic)),
      lower: log ? Math.exp(lower) : lower,
      upper: log ? Math.exp(upper) : upper,
    };
  };
  for (const [a, ref] of contrastPairs(K, treatment.referenceIndex, plan.set)) {
    const level = treatment.levels[a];
    const ma = means[a];
    const mr = means[ref];
    const measures: {
      measure: MarginalContrast["measure"];
      estimate: number;
      grad: number[];
      log: boolean;
    }[] = [];
    const basis = (ga: number, gr: number) =>
      Array.from({ length: K }, (_, b) => (b === a ? ga : b === ref ? gr : 0));
    if (binary) {
      measures.push({ measure: "risk difference", estimate: ma - mr, grad: basis(1, -1), log: false });
      measures.push({ measure: "risk ratio", estimate: ma / mr, grad: basis(1 / ma, -1 / mr), log: true });
      measures.push({
        measure: "odds ratio",
        estimate: ma / (1 - ma) / (mr / (1 - mr)),
        grad: basis(1 / (ma * (1 - ma)), -1 / (mr * (1 - mr))),
        log: true,
      });
    } else {
      measures.push({ measure: "rate ratio", estimate: ma / mr, grad: basis(1 / ma, -1 / mr), log: true });
    }
    for (const m of measures) {
      const model = interval(m.estimate, quad(ge, m.grad), m.log);
      raw.push({
        measure: m.measure,
        level,
        reference: treatment.levels[ref],
        estimate: m.estimate,
        ...model,
        robust: robustVariance.applies ? interval(m.estimate, quad(ye, m.grad), m.log) : null,
      });
    }
  }
  const contrasts = plan.multiplicity === "none" ? raw : adjustByMeasure(raw, plan.multiplicity);
  return {
    treatment: treatmentName,
    robustVariance,
    means: meanRows,
    contrasts,
    contrastSet: plan.set,
    multiplicity: plan.multiplicity,
  };
}

/** Adjusted p-values within each measure's family (model-based and robust separately). */
function adjustByMeasure(raw: MarginalContrast[], method: ContrastPlan["multiplicity"]): MarginalContrast[] {
  const out = [...raw];
  for (const measure of new Set(raw.map((c) => c.measure))) {
    const idx = raw.map((c, i) => (c.measure === measure ? i : -1)).filter((i) => i >= 0);
    const model = adjustPValues(
      idx.map((i) => raw[i].p),
      method,
    );
    const robustRows = idx.map((i) => raw[i].robust);
    const robust = robustRows.every((r) => r !== null)
      ? adjustPValues(
          robustRows.map((r) => (r as MarginalInterval).p),
          method,
        )
      : null;
    idx.forEach((i, k) => {
      const r = raw[i].robust;
      out[i] = { ...raw[i], pAdjusted: model[k], robust: r && robust ? { ...r, pAdjusted: robust[k] } : r };
    });
  }
  return out;
}
