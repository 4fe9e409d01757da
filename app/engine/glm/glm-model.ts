/**
 * The generalized linear model rerun: binomial (logit, probit, cloglog), Poisson, quasi-Poisson
 * and negative binomial (NB2, θ by maximum likelihood; Venables and Ripley 2002, 7.4) with log
 * link; IRLS through the Householder QR; Wald and profile-likelihood inference; observation-level
 * diagnostics at convergence from the weighted QR (Williams 1987; Pregibon 1981); checks of
 * assumptions and marginal treatment effects.
 */
import { toNumbers, type DataTable } from "../data";
import { buildDesign, prepareData, type Design, type PreparedData, type Variable } from "../design";
import { observationDiagnostics, robustCovariances } from "../diagnostics";
import { chiSquareUpper, normalQuantile, normalUpper, tTwoSided } from "../distributions";
import { treatmentTestProblem, type TreatmentChiSquareTest } from "../treatment-test";
import { EngineError } from "../errors";
import { interactionName } from "../coefficient-names";
import type { FitMethod, VariableSummary } from "../linear-model";
import { CANONICAL_LINK, type Link, type ModelSpec } from "../model-spec";
import { readQqShape, type QqShape } from "../qq-shape";
import { ENGINE_VERSION, RESULTS_CAUTION } from "../version";
import { predictorVarianceInflation, varianceInflation, type PredictorVifRow, type VifRow } from "../vif";
import {
  binnedResiduals,
  calibration,
  devianceGoodnessOfFit,
  likelihoodRatio,
  overdispersion,
  type BinnedResidual,
  type Calibration,
  type ChiSquareCheck,
  type LikelihoodRatioTest,
  type OverdispersionCheck,
} from "./glm-checks";
import { checkGlmResponse, prepareGlmTable } from "./glm-data";
import {
  binomialFamily,
  linkFunctions,
  negativeBinomialFamily,
  poissonFamily,
  quasiPoissonFamily,
  type GlmFamily,
  type GlmFamilyName,
  type LinkFunctions,
} from "./families";
import { irls, type IrlsFit } from "./irls";
import { marginalEffects, robustVarianceApplicability, type MarginalEffects } from "./marginal-effects";
import { thetaMaximumLikelihood } from "./negative-binomial";
import { profileIntervals, type ProfileInterval } from "./profile-intervals";
import { quantileResiduals } from "./quantile-residuals";
import { detectSeparation } from "./separation";
import lowess from "@stdlib/stats-lowess";

/** Raised when a binary model shows separation: the planned model has no finite estimates. */
export class SeparationError extends EngineError {
  constructor(
    message: string,
    readonly kind: "complete" | "quasi-complete",
    readonly coefficients: readonly string[],
    readonly terms: readonly string[],
  ) {
    super(message);
    this.name = "SeparationError";
  }
}

export interface GlmCoefficientRow {
  readonly name: string;
  readonly term: string | null;
  readonly estimate: number;
  readonly se: number;
  /** Wald z (t when the dispersion is estimated). */
  readonly statistic: number;
  readonly p: number;
  /** 95% Wald interval. */
  readonly lower: number;
  readonly upper: number;
}

export interface RatioRow {
  readonly name: string;
  readonly ratio: number;
  /** 95% interval from the Wald interval of the coefficient. */
  readonly lower: number;
  readonly upper: number;
  /** 95% interval from the profile-likelihood interval, when computed. */
  readonly profileLower: number | null;
  readonly profileUpper: number | null;
}

export interface GlmFitSummary {
  readonly deviance: number;
  readonly nullDeviance: number;
  readonly logLik: number | null;
  readonly aic: number | null;
  readonly dispersion: number;
  readonly iterations: number;
  readonly converged: boolean;
  readonly dfResidual: number;
  readonly dfNull: number;
  readonly pearsonChiSquare: number;
  /** Negative binomial shape θ and its standard error. */
  readonly theta?: number;
  readonly thetaSE?: number;
}

export interface GlmObservationColumns {
  readonly row: number[];
  readonly id: (string | null)[];
  readonly response: number[];
  /** Fitted mean μ̂. */
  readonly fitted: number[];
  /** Response residual y − μ̂. */
  readonly residual: number[];
  readonly pearson: number[];
  readonly devianceResidual: number[];
  readonly workingResidual: number[];
  readonly leverage: number[];
  /** r_D / √(φ(1 − h)). */
  readonly studentizedInternal: number[];
  /** Likelihood residual sign(r_D)·√(r_D² + h·r_P²/(1 − h)) (÷ √φ̂ when estimated). */
  readonly studentizedExternal: number[];
  /** r_P² h / (φ p (1 − h)²). */
  readonly cooksDistance: number[];
  /** One-step DFBETAS, one array per coefficient. */
  readonly dfbetas: number[][];
  /** Partial residuals on the working (link) scale per term. */
  readonly partialResiduals: { readonly term: string; readonly values: number[] }[];
  /** Randomized quantile residuals (Dunn and Smyth 1996), fixed seed. */
  readonly quantileResidual: number[];
}

export interface GlmChecks {
  readonly overdispersion: OverdispersionCheck;
  readonly devianceGoodnessOfFit: ChiSquareCheck;
  /** Likelihood-ratio test of a quadratic term per continuous covariate. */
  readonly linearity: readonly LikelihoodRatioTest[];
  /**
   * LOWESS smooth (Cleveland 1979; f = 2/3, three robustness steps) of each continuous
   * covariate's partial residuals on the link scale: a straight smooth means the term is linear.
   */
  readonly linearitySmooth: readonly { readonly term: string; readonly x: number[]; readonly y: number[] }[];
  /** Likelihood-ratio tests of treatment-by-covariate interactions, per covariate and jointly. */
  readonly homogeneityOfTreatmentEffect?: {
    readonly joint: LikelihoodRatioTest;
    readonly byCovariate: readonly LikelihoodRatioTest[];
  };
  readonly calibration?: Calibration;
  /** Likelihood-ratio χ² of the treatment term (treatment-test.ts). */
  readonly treatment?: TreatmentChiSquareTest;
}

export interface GlmResult {
  readonly kind: "glm";
  readonly engineVersion: string;
  readonly caution: string;
  readonly method: FitMethod;
  readonly spec: ModelSpec;
  readonly family: GlmFamilyName;
  readonly link: Link;
  readonly n: number;
  readonly excluded: number;
  readonly excludedRows: number[];
  readonly rank: number;
  readonly dfResidual: number;
  readonly variables: VariableSummary[];
  readonly terms: { readonly label: string; readonly kind: string; readonly coefficients: string[] }[];
  readonly coefficients: GlmCoefficientRow[];
  readonly statisticName: "z" | "t";
  readonly covariance: number[][];
  readonly robustSE: {
    readonly HC0: number[];
    readonly HC1: number[];
    readonly HC2: number[];
    readonly HC3: number[];
  };
  readonly profileIntervals: ProfileInterval[] | null;
  readonly ratioName: "odds ratio" | "rate ratio" | null;
  readonly ratios: RatioRow[] | null;
  readonly fit: GlmFitSummary;
  readonly events: number;
  readonly eventsPerVariable: number;
  readonly observations: GlmObservationColumns;
  readonly checks: GlmChecks;
  readonly binnedResiduals: BinnedResidual[] | null;
  readonly vif: VifRow[];
  /** Predictor-wise GVIF (each variable with its interactions; read by the collinearity check). */
  readonly vifByPredictor: PredictorVifRow[];
  readonly qqShape: QqShape;
  readonly marginalEffects: MarginalEffects | null;
  /** Plain-words notes on the fit (iteration limit reached, few events per variable). */
  readonly notes: string[];
}

export interface GlmOptions {
  /** Profile-likelihood intervals (default: on up to 200 000 cells n·p). */
  readonly profile?: boolean;
}

interface CoreFit {
  readonly fit: IrlsFit;
  readonly family: GlmFamily;
  readonly theta?: { theta: number; se: number };
}

function familyOf(name: GlmFamilyName, theta?: number): GlmFamily {
  switch (name) {
    case "binomial":
      return binomialFamily;
    case "poisson":
      return poissonFamily;
    case "quasipoisson":
      return quasiPoissonFamily;
    case "negative-binomial":
      return negativeBinomialFamily(theta ?? 1);
  }
}

/** Fits the family on a design (for negative binomial, alternating IRLS and θ̂). */
function fitCore(
  x: Float64Array,
  n: number,
  p: number,
  data: PreparedData,
  familyName: GlmFamilyName,
  link: LinkFunctions,
  offset: Float64Array | null = data.offset,
  fixedTheta?: number,
): CoreFit {
  const base = { x, n, p, y: data.response, weights: data.weights, offset, link };
  if (familyName !== "negative-binomial") {
    const family = familyOf(familyName);
    return { fit: irls({ ...base, family }), family };
  }
  if (fixedTheta !== undefined) {
    const family = negativeBinomialFamily(fixedTheta);
    return { fit: irls({ ...base, family }), family, theta: { theta: fixedTheta, se: NaN } };
  }
  let fit = irls({ ...base, family: poissonFamily });
  let iterations = fit.iterations;
  let est = thetaMaximumLikelihood(data.response, fit.mu, data.weights);
  let family = negativeBinomialFamily(est.theta);
  for (let outer = 0; outer < 100; outer++) {
    fit = irls({ ...base, family, start: fit.coefficients });
    iterations += fit.iterations;
    const next = thetaMaximumLikelihood(data.response, fit.mu, data.weights);
    const change = Math.abs(next.theta - est.theta) / est.theta;
    est = next;
    family = negativeBinomialFamily(est.theta);
    if (change < 1e-10) break;
  }
  fit = irls({ ...base, family, start: fit.coefficients });
  // report the IRLS iterations of the whole alternation between the coefficients and θ
  return { fit: { ...fit, iterations: iterations + fit.iterations }, family, theta: est };
}

function nameAliased(design: Design, aliased: readonly number[]): never {
  const names = aliased.map((j) => `"${design.names[j]}"`).join(", ");
  throw new EngineError(
    `the design's columns are aliased: ${names} cannot be estimated apart from earlier columns; a planned model must be estimable as written`,
  );
}

/** The family and link the specification names, refused when the family does not offer the link. */
function familyAndLink(spec: ModelSpec): { familyName: GlmFamilyName; linkName: Link; link: LinkFunctions } {
  const familyName = spec.family as GlmFamilyName;
  const linkName = spec.link ?? CANONICAL_LINK[spec.family];
  const allowed: Record<GlmFamilyName, Link[]> = {
    binomial: ["logit", "probit", "cloglog"],
    poisson: ["log"],
    quasipoisson: ["log"],
    "negative-binomial": ["log"],
  };
  if (!allowed[familyName].includes(linkName)) {
    throw new EngineError(
      `link "${linkName}" is not available for the ${familyName} family; use ${allowed[familyName].join(", ")}`,
    );
  }
  return { familyName, linkName, link: linkFunctions(linkName) };
}

/** Refuses a binomial fit whose estimates diverge (complete or quasi-complete separation). */
function refuseSeparation(
  fit: IrlsFit,
  design: Design,
  data: PreparedData,
  family: GlmFamily,
  link: LinkFunctions,
): void {
  const { n, p } = design;
  const sep = detectSeparation(fit, design.x, n, p, data.response, data.offset, family, link);
  if (sep) {
    const names = sep.coefficients.filter((j) => !(design.intercept && j === 0)).map((j) => design.names[j]);
    const termLabels = [
      ...new Set(
        design.terms.filter((t) => t.columns.some((c) => sep.coefficients.includes(c))).map((t) => t.label),
      ),
    ];
    throw new SeparationError(
      `${sep.kind} separation: ${termLabels.length > 0 ? `the estimates for ${termLabels.map((t) => `"${t}"`).join(", ")}` : "the estimates"} diverge (${sep.boundaryRows} rows have fitted probability 0 or 1), so the planned model has no finite maximum-likelihood estimate; consider a penalized (Firth) fit or merging levels as a documented deviation`,
      sep.kind,
      names,
      termLabels,
    );
  }
}

/** Pearson and deviance residuals, and the Pearson χ² they sum to. */
function residualsOf(y: Float64Array, mu: Float64Array, pw: Float64Array | null, family: GlmFamily) {
  const n = y.length;
  let pearsonChiSquare = 0;
  const pearson = new Float64Array(n);
  const devRes = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const w = pw ? pw[i] : 1;
    pearson[i] = ((y[i] - mu[i]) * Math.sqrt(w)) / Math.sqrt(family.variance(mu[i]));
    pearsonChiSquare += pearson[i] * pearson[i];
    const d = family.deviance(y[i], mu[i], w);
    devRes[i] = Math.sign(y[i] - mu[i]) * Math.sqrt(Math.max(0, d));
  }
  return { pearson, devRes, pearsonChiSquare };
}

/** Wald rows: t tests with an estimated dispersion, z tests otherwise; 95% intervals on the normal quantile. */
function waldRows(
  design: Design,
  estimates: ArrayLike<number>,
  cov: ArrayLike<number>,
  estimatedPhi: boolean,
  dfResidual: number,
): GlmCoefficientRow[] {
  const p = design.p;
  const q = normalQuantile(0.975);
  const termOf = new Map<number, string>();
  for (const t of design.terms) for (const c of t.columns) termOf.set(c, t.label);
  return design.names.map((name, j) => {
    const estimate = estimates[j];
    const se = Math.sqrt(cov[j * p + j]);
    const statistic = estimate / se;
    const pv = estimatedPhi ? tTwoSided(statistic, dfResidual) : 2 * normalUpper(Math.abs(statistic));
    return {
      name,
      term: termOf.get(j) ?? null,
      estimate,
      se,
      statistic,
      p: pv,
      lower: estimate - q * se,
      upper: estimate + q * se,
    };
  });
}

/**
 * Observation-level diagnostics from the weighted QR at convergence. DFBETAS as R's dfbetas for
 * a glm: the one-step coefficient change of the weighted least-squares fit at convergence with
 * the deviance residual as its weighted residual, scaled by the leave-one-out σ computed from
 * those residuals.
 */
function influenceOf(
  wfit: IrlsFit["weighted"],
  devRes: Float64Array,
  pearson: Float64Array,
  dispersion: number,
  estimatedPhi: boolean,
  p: number,
) {
  const n = devRes.length;
  const dfResidual = n - p;
  let devSs = 0;
  for (let i = 0; i < n; i++) devSs += devRes[i] * devRes[i];
  const lsDiag = observationDiagnostics({
    ...wfit,
    weightedResiduals: devRes,
    sigma: Math.sqrt(devSs / dfResidual),
  });
  const h = lsDiag.leverage;
  const internal = new Float64Array(n);
  const external = new Float64Array(n);
  const cook = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const m = 1 - h[i];
    internal[i] = devRes[i] / Math.sqrt(dispersion * m);
    const lr = Math.sign(devRes[i]) * Math.sqrt(devRes[i] * devRes[i] + (h[i] * pearson[i] * pearson[i]) / m);
    external[i] = estimatedPhi ? lr / Math.sqrt(dispersion) : lr;
    cook[i] = (pearson[i] * pearson[i] * h[i]) / (dispersion * p * m * m);
  }
  return { lsDiag, h, internal, external, cook };
}

/** Odds ratios (logit) or rate ratios (log) of the terms' coefficients, with Wald and profile intervals. */
function ratioRows(
  linkName: Link,
  coefficients: readonly GlmCoefficientRow[],
  profile: ReturnType<typeof profileIntervals> | null,
) {
  const ratioName: GlmResult["ratioName"] =
    linkName === "logit" ? "odds ratio" : linkName === "log" ? "rate ratio" : null;
  const expOrNull = (v: number | null | undefined) => (v === null || v === undefined ? null : Math.exp(v));
  const ratios = ratioName
    ? coefficients
        .map((c, j) => ({ c, j }))
        .filter(({ c }) => c.term !== null)
        .map(({ c, j }) => ({
          name: c.name,
          ratio: Math.exp(c.estimate),
          lower: Math.exp(c.lower),
          upper: Math.exp(c.upper),
          profileLower: expOrNull(profile?.[j].lower),
          profileUpper: expOrNull(profile?.[j].upper),
        }))
    : null;
  return { ratioName, ratios };
}

/** Notes on the fit: IRLS stopped at its limit, too few events per coefficient. */
function fitNotes(
  fit: IrlsFit,
  familyName: GlmFamilyName,
  n: number,
  events: number,
  eventsPerVariable: number,
): string[] {
  const notes: string[] = [];
  if (!fit.converged) {
    notes.push(
      `IRLS stopped at its limit of ${fit.iterations} iterations before the deviance settled; the estimates may not be the maximum-likelihood estimates.`,
    );
  }
  if (eventsPerVariable < 10) {
    const smaller =
      familyName === "binomial" && n - events < events
        ? "non-events (the smaller class)"
        : familyName === "binomial"
          ? "events (the smaller class)"
          : "events";
    notes.push(
      `Only ${eventsPerVariable.toFixed(1)} ${smaller} per estimated coefficient (fewer than 10): estimates may be biased away from zero and intervals too narrow.`,
    );
  }
  return notes;
}

/** What the GLM fit needs to check its assumptions and test the treatment term. */
interface CheckInputs {
  readonly spec: ModelSpec;
  readonly data: PreparedData;
  readonly design: Design;
  readonly core: CoreFit;
  readonly familyName: GlmFamilyName;
  readonly link: LinkFunctions;
  readonly estimatedPhi: boolean;
  readonly dispersion: number;
  readonly pearsonChiSquare: number;
  readonly partialResiduals: readonly { term: string; values: number[] }[];
}

/** The checks of a GLM fit: overdispersion, deviance goodness of fit, linearity, homogeneity of the treatment effect, the treatment test, calibration. */
function glmChecks(inputs: CheckInputs): GlmChecks {
  const {
    spec,
    data,
    design,
    core,
    familyName,
    link,
    estimatedPhi,
    dispersion,
    pearsonChiSquare,
    partialResiduals,
  } = inputs;
  const { n, p } = design;
  const { fit } = core;
  const y = data.response;
  const pw = data.weights;
  const mu = fit.mu;
  const dfResidual = n - p;
  // Nested-model tests compare this model with a larger one fitted on the same rows, as R's
  // anova.glm and MASS's anova.negbin do: with an estimated dispersion (quasi-Poisson) the F test
  // takes the dispersion and its degrees of freedom from the larger model; for the negative
  // binomial θ is re-estimated in the larger model and the statistic is twice the difference of
  // the log-likelihoods, each at its own θ.
  const isNegBin = familyName === "negative-binomial";
  const minusTwoLogLik = (r: CoreFit): number => {
    let ll = 0;
    for (let i = 0; i < n; i++) ll += r.family.logLikelihood(y[i], r.fit.mu[i], pw ? pw[i] : 1);
    return -2 * ll;
  };
  const smallCriterion = isNegBin ? minusTwoLogLik(core) : fit.deviance;
  const larger = (
    x: Float64Array,
    columns: number,
  ): { criterion: number; rank: number; dispersion: number | null } => {
    const r = fitCore(x, n, columns, data, familyName, link, data.offset);
    const rank = columns - r.fit.aliased.length;
    let largerDispersion: number | null = null;
    if (estimatedPhi) {
      let chi = 0;
      for (let i = 0; i < n; i++)
        chi += ((pw ? pw[i] : 1) * (y[i] - r.fit.mu[i]) ** 2) / r.family.variance(r.fit.mu[i]);
      largerDispersion = chi / (n - rank);
    }
    return { criterion: isNegBin ? minusTwoLogLik(r) : r.fit.deviance, rank, dispersion: largerDispersion };
  };
  const nested = (term: string, big: { criterion: number; rank: number; dispersion: number | null }) =>
    likelihoodRatio(term, smallCriterion, big.criterion, big.rank - p, big.dispersion, n - big.rank);
  const refit = (extra: string[][]) => {
    const big = buildDesign(spec, data, extra);
    return larger(big.x, big.p);
  };
  const linearity: LikelihoodRatioTest[] = [];
  for (const t of design.terms) {
    if (t.kind !== "continuous") continue;
    const v = data.variables.get(t.variables[0]) as Extract<Variable, { kind: "continuous" }>;
    const squared = buildDesign(spec, data);
    const x2 = new Float64Array(n * (p + 1));
    x2.set(squared.x);
    for (let i = 0; i < n; i++) x2[p * n + i] = (v.values[i] - v.mean) ** 2;
    linearity.push(nested(`${t.label} squared`, larger(x2, p + 1)));
  }
  // The overall test of the treatment term: the model against the model without it, refitted on
  // the same rows (θ re-estimated for the negative binomial; for quasi-Poisson the deviance
  // difference is scaled by this model's dispersion, as R's anova.glm(test = "Chisq") does).
  const treatmentLikelihoodRatio = (arm: string): TreatmentChiSquareTest | undefined => {
    const term = design.terms.find((t) => t.kind !== "interaction" && t.variables[0] === arm);
    if (!term) return undefined;
    const problem = treatmentTestProblem(
      arm,
      design.terms.filter((t) => t.kind === "interaction").map((t) => t.variables),
    );
    const df = term.columns.length;
    if (problem) return { term: term.label, statistic: null, df, p: null, reason: problem };
    const keep = Array.from({ length: p }, (_, j) => j).filter((j) => !term.columns.includes(j));
    const xr = new Float64Array(n * keep.length);
    keep.forEach((j, k) => xr.set(design.x.subarray(j * n, (j + 1) * n), k * n));
    const reduced = fitCore(xr, n, keep.length, data, familyName, link, data.offset);
    const difference = isNegBin
      ? minusTwoLogLik(reduced) - smallCriterion
      : reduced.fit.deviance - fit.deviance;
    const statistic = estimatedPhi ? difference / dispersion : difference;
    return { term: term.label, statistic, df, p: chiSquareUpper(statistic, df) };
  };
  let homogeneity: GlmChecks["homogeneityOfTreatmentEffect"];
  if (spec.treatment) {
    const arm = spec.treatment;
    const others = design.terms
      .filter((t) => t.kind !== "interaction" && t.variables[0] !== arm)
      .map((t) => t.variables[0])
      .filter(
        (c) =>
          !design.terms.some(
            (t) =>
              t.kind === "interaction" &&
              t.variables.length === 2 &&
              t.variables.includes(c) &&
              t.variables.includes(arm),
          ),
      );
    if (others.length > 0) {
      const byCovariate = others.map((c) => {
        return nested(interactionName([arm, c]), refit([[arm, c]]));
      });
      homogeneity = {
        joint: nested("all treatment interactions", refit(others.map((c) => [arm, c]))),
        byCovariate,
      };
    }
  }
  const treatmentTest = spec.treatment ? treatmentLikelihoodRatio(spec.treatment) : undefined;
  const linearitySmooth = design.terms
    .map((t, k) => ({ t, k }))
    .filter(({ t }) => t.kind === "continuous")
    .map(({ t, k }) => {
      const v = data.variables.get(t.variables[0]) as Extract<Variable, { kind: "continuous" }>;
      const smooth = lowess(toNumbers(v.values), partialResiduals[k].values);
      return { term: t.label, x: smooth.x, y: smooth.y };
    });
  const meanCount = mu.reduce((s, v) => s + v, 0) / n;
  const checks: GlmChecks = {
    overdispersion: overdispersion(pearsonChiSquare, dfResidual, familyName),
    devianceGoodnessOfFit: devianceGoodnessOfFit(fit.deviance, dfResidual, familyName, meanCount),
    linearity,
    linearitySmooth,
    ...(homogeneity ? { homogeneityOfTreatmentEffect: homogeneity } : {}),
    ...(treatmentTest ? { treatment: treatmentTest } : {}),
    ...(familyName === "binomial" ? { calibration: calibration(y, mu) } : {}),
  };
  return checks;
}

/** Fits the generalized linear model the specification describes. */
export function fitGlmModel(spec: ModelSpec, tableIn: DataTable, options: GlmOptions = {}): GlmResult {
  const { familyName, linkName, link } = familyAndLink(spec);
  const table = prepareGlmTable(spec, tableIn);
  const data = prepareData(spec, table);
  const design = buildDesign(spec, data);
  const { n, p } = design;
  if (n <= p) {
    throw new EngineError(
      `${n} usable rows for ${p} coefficients: the model needs more usable rows than coefficients`,
    );
  }
  checkGlmResponse(spec, data);
  const core = fitCore(design.x, n, p, data, familyName, link);
  const { fit, family } = core;
  if (fit.aliased.length > 0) nameAliased(design, fit.aliased);

  if (familyName === "binomial") refuseSeparation(fit, design, data, family, link);

  const pw = data.weights;
  const y = data.response;
  const mu = fit.mu;
  const wfit = fit.weighted;
  const dfResidual = n - p;
  const { pearson, devRes, pearsonChiSquare } = residualsOf(y, mu, pw, family);
  const dispersion = family.estimatedDispersion ? pearsonChiSquare / dfResidual : 1;
  const cov = wfit.unscaledCovariance.map((v) => v * dispersion);
  const estimatedPhi = family.estimatedDispersion;
  const coefficients = waldRows(design, fit.coefficients, cov, estimatedPhi, dfResidual);

  // null deviance: intercept-only model (with the offset), or η = offset without an intercept
  let nullDeviance: number;
  if (design.intercept) {
    const ones = new Float64Array(n).fill(1);
    const nullFit = fitCore(ones, n, 1, data, familyName, link, data.offset, core.theta?.theta);
    nullDeviance = nullFit.fit.deviance;
  } else {
    nullDeviance = 0;
    for (let i = 0; i < n; i++)
      nullDeviance += family.deviance(y[i], link.inverse(data.offset ? data.offset[i] : 0), pw ? pw[i] : 1);
  }
  let logLik: number | null = null;
  if (!estimatedPhi) {
    logLik = 0;
    for (let i = 0; i < n; i++) logLik += family.logLikelihood(y[i], mu[i], pw ? pw[i] : 1);
  }
  const aic = logLik === null ? null : -2 * logLik + 2 * (p + (core.theta ? 1 : 0));

  const { lsDiag, h, internal, external, cook } = influenceOf(
    wfit,
    devRes,
    pearson,
    dispersion,
    estimatedPhi,
    p,
  );
  const robust = robustCovariances(wfit, h);
  const working = new Float64Array(n);
  for (let i = 0; i < n; i++) working[i] = (y[i] - mu[i]) / link.derivative(fit.eta[i]);
  const partialResiduals = design.terms.map((t) => {
    const values = new Float64Array(n);
    for (const c of t.columns)
      for (let i = 0; i < n; i++) values[i] += fit.coefficients[c] * design.x[c * n + i];
    const mean = values.reduce((s, v) => s + v, 0) / n;
    return { term: t.label, values: Array.from(values, (v, i) => v - mean + working[i]) };
  });
  const quantile = quantileResiduals(y, mu, family);

  // checks
  const events = y.reduce((s, v) => s + v, 0);
  const freeParameters = Math.max(1, p - (design.intercept ? 1 : 0));
  const eventsPerVariable =
    (familyName === "binomial" ? Math.min(events, n - events) : events) / freeParameters;
  const checks = glmChecks({
    spec,
    data,
    design,
    core,
    familyName,
    link,
    estimatedPhi,
    dispersion,
    pearsonChiSquare,
    partialResiduals,
  });

  const wantProfile = options.profile ?? n * p <= 200_000;
  const profile = wantProfile
    ? profileIntervals(
        design,
        data,
        fit,
        (off, k) => {
          const r = fitCore(k.x, n, k.p, data, familyName, link, off, core.theta?.theta);
          return r.fit.deviance;
        },
        coefficients,
        dispersion,
        estimatedPhi,
        dfResidual,
      )
    : null;

  const { ratioName, ratios } = ratioRows(linkName, coefficients, profile);
  const notes = fitNotes(fit, familyName, n, events, eventsPerVariable);

  const marginal =
    spec.treatment && data.variables.get(spec.treatment)?.kind === "categorical"
      ? marginalEffects(
          design,
          data,
          spec.treatment,
          fit.coefficients,
          cov,
          link,
          familyName === "binomial",
          robustVarianceApplicability(familyName, linkName, design.intercept, pw !== null),
          { set: spec.contrasts ?? "reference", multiplicity: spec.multiplicity ?? "none" },
        )
      : null;

  const summarize = (v: Variable): VariableSummary =>
    v.kind === "continuous"
      ? { name: v.name, kind: v.kind, mean: v.mean }
      : { name: v.name, kind: v.kind, levels: v.levels, reference: v.reference, counts: v.counts };
  const diag = (m: Float64Array) => Array.from({ length: p }, (_, j) => Math.sqrt(m[j * p + j]));

  return {
    kind: "glm",
    engineVersion: ENGINE_VERSION,
    caution: RESULTS_CAUTION,
    method: {
      kind: "planned",
      description: `planned model, ${familyName} family with ${linkName} link, maximum likelihood by IRLS`,
    },
    spec,
    family: familyName,
    link: linkName,
    n,
    excluded: data.excludedRows.length,
    excludedRows: [...data.excludedRows],
    rank: p,
    dfResidual,
    variables: [...data.variables.values()].map(summarize),
    terms: design.terms.map((t) => ({
      label: t.label,
      kind: t.kind,
      coefficients: t.columns.map((c) => design.names[c]),
    })),
    coefficients,
    statisticName: estimatedPhi ? "t" : "z",
    covariance: Array.from({ length: p }, (_, i) => Array.from({ length: p }, (_, j) => cov[j * p + i])),
    robustSE: { HC0: diag(robust.HC0), HC1: diag(robust.HC1), HC2: diag(robust.HC2), HC3: diag(robust.HC3) },
    profileIntervals: profile,
    ratioName,
    ratios,
    fit: {
      deviance: fit.deviance,
      nullDeviance,
      logLik,
      aic,
      dispersion,
      iterations: fit.iterations,
      converged: fit.converged,
      dfResidual,
      dfNull: n - (design.intercept ? 1 : 0),
      pearsonChiSquare,
      ...(core.theta ? { theta: core.theta.theta, thetaSE: core.theta.se } : {}),
    },
    events,
    eventsPerVariable,
    observations: {
      row: Array.from(data.used, (i) => data.rowNumbers[i]),
      id: [...data.ids],
      response: toNumbers(y),
      fitted: toNumbers(mu),
      residual: Array.from(y, (v, i) => v - mu[i]),
      pearson: toNumbers(pearson),
      devianceResidual: toNumbers(devRes),
      workingResidual: toNumbers(working),
      leverage: toNumbers(h),
      studentizedInternal: toNumbers(internal),
      studentizedExternal: toNumbers(external),
      cooksDistance: toNumbers(cook),
      dfbetas: lsDiag.dfbetas.map((c) => toNumbers(c)),
      partialResiduals,
      quantileResidual: toNumbers(quantile),
    },
    checks,
    binnedResiduals: familyName === "binomial" ? binnedResiduals(y, mu) : null,
    vif: varianceInflation(design, wfit.unscaledCovariance),
    vifByPredictor: predictorVarianceInflation(design, wfit.unscaledCovariance),
    qqShape: readQqShape(quantile),
    marginalEffects: marginal,
    notes,
  };
}
