/**
 * The mixed model for repeated measures (MMRM): y = Xβ + ε with ε correlated within a subject
 * across visits (a structured or unstructured covariance Σ of the visits, no random effects),
 * fitted by REML or ML; subjects with missing visits contribute the visits they have. The planned
 * structure is fitted first; when it does not converge, the plan's fallbacks are tried in order
 * and the result says which structure was used and why.
 */
import { toDataTable, type TableInput } from "../data";
import { EngineError } from "../errors";
import { chiSquareUpper, tQuantile, tTwoSided } from "../distributions";
import { adjustPValues, type Multiplicity } from "../multiplicity";
import type { MeansWeighting } from "../adjusted-means";
import { ENGINE_VERSION, RESULTS_CAUTION } from "../version";
import { cholesky } from "../survival/symmetric";
import { fitCovariance, startingCovariance, type CovarianceFit } from "./covariance-fit";
import { NotPositiveDefinite, type LikelihoodProblem } from "./likelihood";
import { residualColumns, residualsByCell, type ResidualCell } from "./normalized-residuals";
import { prepareRepeatedData, type RepeatedData } from "./repeated-data";
import {
  parseRepeatedSpec,
  type CovarianceStructureName,
  type RepeatedDf,
  type RepeatedMethod,
  type RepeatedSpec,
} from "./repeated-spec";
import { fTest, satterthwaite, type DenominatorDf, type FTestResult } from "./satterthwaite";
import { subjectInfluence } from "./subject-influence";
import { kenwardRoger, linearBasis, type KenwardRoger } from "./kenward-roger";
import { treatmentByVisitRows, visitMeanVectors, type VisitGrid } from "./visit-means";

export interface StructureAttempt {
  readonly structure: CovarianceStructureName;
  readonly converged: boolean;
  readonly iterations: number;
  /** Why it was not used (null for the one used). */
  readonly reason: string | null;
}

export interface VisitCovariance {
  /** The structure used. */
  readonly structure: CovarianceStructureName;
  readonly planned: CovarianceStructureName;
  /** Every structure tried, in order, the used one last. */
  readonly attempts: readonly StructureAttempt[];
  readonly converged: boolean;
  readonly iterations: number;
  /** REML or ML log-likelihood as nlme reports it. */
  readonly logLik: number;
  /** −2ℓ + 2(p + number of covariance parameters), nlme's count. */
  readonly aic: number;
  readonly bic: number;
  readonly parameterCount: number;
  readonly visits: readonly string[];
  readonly matrix: number[][];
  readonly correlation: number[][];
}

export interface RepeatedCoefficient {
  readonly name: string;
  readonly term: string;
  readonly estimate: number;
  readonly se: number;
  readonly df: number;
  readonly statistic: number;
  readonly p: number;
  readonly lower: number;
  readonly upper: number;
}

export interface VisitMean {
  readonly level: string;
  readonly visit: string;
  readonly estimate: number;
  readonly se: number;
  readonly df: number;
  readonly lower: number;
  readonly upper: number;
}

export interface VisitContrast extends VisitMean {
  /** "LEVEL vs REFERENCE". */
  readonly label: string;
  readonly reference: string;
  readonly statistic: number;
  readonly p: number;
  /**
   * p adjusted for multiplicity by the plan's method within the family of the plan's contrasts at
   * the same visit (absent without a method, and on the contrast set the plan did not choose).
   */
  readonly pAdjusted?: number;
}

export interface RepeatedTest extends FTestResult {
  readonly hypothesis: string;
}

export interface StructureTest {
  readonly against: "unstructured";
  readonly statistic: number | null;
  readonly df: number | null;
  readonly p: number | null;
  readonly reason: string | null;
}

export interface RepeatedObservationColumns {
  /** 1-based data row. */
  readonly row: number[];
  readonly id: string[];
  readonly visit: string[];
  /** Treatment arm of each record (null when the model names no categorical treatment). */
  readonly level: (string | null)[];
  readonly fitted: number[];
  readonly residual: number[];
  readonly normalizedResidual: number[];
}

export interface SubjectRow {
  readonly id: string;
  readonly records: number;
  readonly cooksDistance: number;
  /** Change in each treatment contrast at the primary visit without the subject (order of `influence.contrasts`). */
  readonly treatmentChange: number[];
}

export interface RepeatedResult {
  readonly kind: "repeated";
  readonly engineVersion: string;
  readonly caution: string;
  readonly spec: RepeatedSpec;
  readonly method: RepeatedMethod;
  readonly dfMethod: RepeatedDf;
  /** Records used. */
  readonly n: number;
  readonly excluded: number;
  readonly excludedRows: number[];
  readonly subjectCount: number;
  readonly covariance: VisitCovariance;
  readonly coefficients: RepeatedCoefficient[];
  /** Covariance of β̂ behind the SEs (Kenward–Roger's adjusted one with that df method), rows and columns in coefficient order. */
  readonly coefficientCovariance: number[][];
  readonly coefficientCovarianceType: "model-based" | "Kenward–Roger adjusted";
  readonly adjustedMeans: {
    readonly treatment: string;
    readonly weighting: MeansWeighting;
    readonly grid: VisitGrid;
    readonly means: VisitMean[];
    readonly contrasts: VisitContrast[];
    readonly pairwise: VisitContrast[];
  } | null;
  readonly tests: {
    readonly treatment: RepeatedTest | null;
    readonly treatmentByVisit: RepeatedTest | null;
    readonly notes: string[];
  };
  readonly structureTest: StructureTest | null;
  readonly counts: { readonly visit: string; readonly level: string | null; readonly subjects: number }[];
  /** Normalized residuals per visit and arm. */
  readonly residualsByCell: ResidualCell[];
  readonly observations: RepeatedObservationColumns;
  readonly influence: {
    readonly method: string;
    readonly primaryVisit: string;
    readonly contrasts: string[];
  };
  readonly subjects: SubjectRow[];
}

export interface RepeatedOptions {
  readonly meansWeighting?: MeansWeighting;
}

/**
 * Adjusted means and contrasts at each visit; the plan's multiplicity method adjusts the plan's
 * set (against the reference, or every pair: `contrasts` with `pairwise`) within each visit.
 */
function visitEffects(
  vectors: NonNullable<ReturnType<typeof visitMeanVectors>>,
  weighting: MeansWeighting,
  spec: RepeatedSpec,
  interval: (l: Float64Array) => { estimate: number; se: number; df: number; lower: number; upper: number },
  withTest: (l: Float64Array) => {
    estimate: number;
    se: number;
    df: number;
    lower: number;
    upper: number;
    statistic: number;
    p: number;
  },
): NonNullable<RepeatedResult["adjustedMeans"]> {
  const contrastOf = (c: (typeof vectors.contrasts)[number]): VisitContrast => ({
    label: c.label,
    level: c.level,
    reference: c.reference,
    visit: c.visit,
    ...withTest(c.l),
  });
  const contrasts = vectors.contrasts.map(contrastOf);
  const pairwise = vectors.pairwise.map(contrastOf);
  const method = spec.multiplicity ?? "none";
  const everyPair = spec.contrasts === "pairwise";
  const family = adjustedByVisit(everyPair ? [...contrasts, ...pairwise] : contrasts, method);
  return {
    treatment: vectors.treatment,
    weighting,
    grid: vectors.grid,
    means: vectors.means.map((m) => ({ level: m.arm, visit: m.visit, ...interval(m.l) })),
    contrasts: family.slice(0, contrasts.length),
    pairwise: everyPair ? family.slice(contrasts.length) : pairwise,
  };
}

/** The plan's set of contrasts (against the reference arm, or every pair of arms), visit by visit in visit order. */
export function plannedVisitContrasts(
  r: Pick<RepeatedResult, "spec" | "adjustedMeans" | "covariance">,
): VisitContrast[] {
  const am = r.adjustedMeans;
  if (!am) return [];
  const set = r.spec.contrasts === "pairwise" ? [...am.contrasts, ...am.pairwise] : [...am.contrasts];
  const position = new Map(r.covariance.visits.map((v, i) => [v, i]));
  return set.sort((a, b) => (position.get(a.visit) ?? 0) - (position.get(b.visit) ?? 0));
}

/**
 * The plan's multiplicity adjustment of the contrasts, applied within each visit: the family is
 * the treatment comparisons at one visit (the arms against the reference, or every pair), as a
 * SAP controls the comparisons of the arms at its primary visit (multiplicity.ts: Bonferroni,
 * Holm 1979, Hochberg 1988).
 */
function adjustedByVisit(contrasts: VisitContrast[], method: Multiplicity): VisitContrast[] {
  if (method === "none") return contrasts;
  const out = contrasts.slice();
  const visits = [...new Set(contrasts.map((c) => c.visit))];
  for (const visit of visits) {
    const at = contrasts.flatMap((c, i) => (c.visit === visit ? [i] : []));
    const adjusted = adjustPValues(
      at.map((i) => contrasts[i].p),
      method,
    );
    at.forEach((i, k) => (out[i] = { ...contrasts[i], pAdjusted: adjusted[k] }));
  }
  return out;
}

function problemOf(rd: RepeatedData, method: RepeatedMethod): LikelihoodProblem {
  return {
    t: rd.visits.length,
    n: rd.design.n,
    p: rd.design.p,
    x: rd.design.x,
    y: rd.data.response,
    subjects: rd.subjects,
    method,
  };
}

function attemptFit(
  problem: LikelihoodProblem,
  name: CovarianceStructureName,
  sigma0: Float64Array,
): { fit: CovarianceFit | null; reason: string | null; iterations: number } {
  try {
    const fit = fitCovariance(problem, name, sigma0);
    if (!fit.converged) return { fit, reason: fit.reason ?? "did not converge", iterations: fit.iterations };
    const k = fit.theta.length;
    // a flat direction (a parameter the data cannot inform) leaves a pivot at rounding level
    if (
      !(
        "l" in
        cholesky(
          fit.hessian.map((v) => -v),
          k,
          1e-7,
        )
      )
    ) {
      return {
        fit,
        reason:
          "the information matrix is singular at the estimate (some covariance parameter is not estimable)",
        iterations: fit.iterations,
      };
    }
    return { fit, reason: null, iterations: fit.iterations };
  } catch (err) {
    if (err instanceof NotPositiveDefinite) return { fit: null, reason: err.message, iterations: 0 };
    if (err instanceof Error && /starting values/.test(err.message))
      return { fit: null, reason: err.message, iterations: 0 };
    throw err;
  }
}

const rows = (m: Float64Array, t: number) =>
  Array.from({ length: t }, (_, a) => Array.from(m.subarray(a * t, (a + 1) * t)));

export function fitRepeatedModel(
  specInput: unknown,
  table: TableInput,
  options: RepeatedOptions = {},
): RepeatedResult {
  const spec = parseRepeatedSpec(specInput);
  const dataTable = toDataTable(table);
  if (dataTable.nRows === 0) throw new EngineError("the data has no rows");
  const rd = prepareRepeatedData(spec, dataTable);
  const { design } = rd;
  const method = spec.repeated.method;
  const problem = problemOf(rd, method);
  const t = problem.t;
  if (design.n <= design.p)
    throw new EngineError(`${design.n} records are too few for ${design.p} coefficients`);
  const sigma0 = startingCovariance(problem);

  // planned structure, then the fallbacks in order
  const order = [
    spec.repeated.covariance,
    ...spec.repeated.fallback.filter((s) => s !== spec.repeated.covariance),
  ];
  const attempts: StructureAttempt[] = [];
  let used: CovarianceFit | null = null;
  for (const name of order) {
    const a = attemptFit(problem, name, sigma0);
    attempts.push({
      structure: name,
      converged: a.reason === null,
      iterations: a.iterations,
      reason: a.reason,
    });
    if (a.reason === null && a.fit) {
      used = a.fit;
      break;
    }
  }
  if (!used) {
    throw new EngineError(
      `no covariance structure could be fitted: ${attempts.map((a) => `${a.structure} (${a.reason})`).join("; ")}`,
    );
  }
  const fit = used;
  const { beta, betaCovariance } = fit.likelihood;
  const p = design.p;
  const logLik = fit.likelihood.logLik;
  const parameterCount = p + fit.parameterCount;
  const nEff = method === "reml" ? design.n - p : design.n;

  let kr: KenwardRoger | null = null;
  if (spec.repeated.df === "kenward-roger") {
    const basis = linearBasis(fit.structure, t);
    if (!basis) {
      throw new EngineError(
        `Kenward–Roger degrees of freedom are available for the unstructured, compound-symmetry and Toeplitz structures, not for "${fit.structure}"`,
      );
    }
    kr = kenwardRoger(problem, fit, basis);
  }
  const sat = spec.repeated.df === "satterthwaite" ? satterthwaite(problem, fit) : null;
  const residualDf = design.n - p;
  const dfOf = (l: Float64Array) => (kr ? kr.df([l]) : sat ? sat.df(l) : residualDf);
  const denominator: DenominatorDf = sat
    ? { kind: "satterthwaite", df: sat.df }
    : { kind: "residual", df: residualDf };
  const runTest = (rows: readonly Float64Array[]) =>
    kr ? kr.fTest(rows, beta) : fTest(rows, beta, betaCovariance, denominator);
  /** Covariance behind every SE: Kenward–Roger's adjusted one when asked for, else (X'V⁻¹X)⁻¹. */
  const inferenceCovariance = kr ? kr.adjustedCovariance : betaCovariance;
  const seOf = (l: Float64Array) => {
    let v = 0;
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) v += l[i] * inferenceCovariance[i * p + j] * l[j];
    return Math.sqrt(v);
  };
  const estimateOf = (l: Float64Array) => l.reduce((s, v, j) => s + v * beta[j], 0);
  const interval = (l: Float64Array) => {
    const estimate = estimateOf(l);
    const se = seOf(l);
    const df = dfOf(l);
    const q = tQuantile(0.975, df);
    return { estimate, se, df, lower: estimate - q * se, upper: estimate + q * se };
  };
  const withTest = (l: Float64Array) => {
    const iv = interval(l);
    const statistic = iv.estimate / iv.se;
    return { ...iv, statistic, p: tTwoSided(statistic, iv.df) };
  };

  const termOf = design.names.map(
    (_, j) => design.terms.find((tm) => tm.columns.includes(j))?.label ?? "Intercept",
  );
  const coefficients: RepeatedCoefficient[] = design.names.map((name, j) => {
    const l = new Float64Array(p);
    l[j] = 1;
    return { name, term: termOf[j], ...withTest(l) };
  });

  const weighting = options.meansWeighting ?? "equal";
  const vectors = visitMeanVectors(rd, weighting);
  const adjustedMeans = vectors ? visitEffects(vectors, weighting, spec, interval, withTest) : null;

  const testNotes: string[] = [];
  const interactionRows = treatmentByVisitRows(rd);
  const treatmentTest: RepeatedTest | null =
    vectors && vectors.treatmentRows.length > 0
      ? {
          hypothesis: "treatment differences averaged over visits (equal weight per visit) are all zero",
          ...runTest(vectors.treatmentRows),
        }
      : null;
  const interactionTest: RepeatedTest | null = interactionRows
    ? {
        hypothesis:
          "treatment differences are the same at every visit (treatment-by-visit coefficients all zero)",
        ...runTest(interactionRows),
      }
    : null;
  if (!spec.treatment) testNotes.push("no treatment is named, so there are no treatment tests");
  else if (!interactionRows)
    testNotes.push("the model has no treatment-by-visit term, so there is no treatment-by-visit test");
  if (kr)
    testNotes.push(
      "F tests are Kenward–Roger's scaled Wald tests on the adjusted covariance, with their denominator df",
    );
  if (spec.repeated.df === "satterthwaite") {
    testNotes.push(
      "F tests with more than one numerator df take the denominator df of Fai and Cornelius (1996) from the Satterthwaite df of the eigen-directions",
    );
  }

  // structure against unstructured
  let structureTest: StructureTest | null = null;
  if (fit.structure !== "unstructured") {
    const un = attemptFit(problem, "unstructured", sigma0);
    if (un.reason === null && un.fit) {
      const stat = Math.max(0, 2 * (un.fit.likelihood.logLik - logLik));
      const df = un.fit.parameterCount - fit.parameterCount;
      structureTest = {
        against: "unstructured",
        statistic: stat,
        df,
        p: df > 0 ? chiSquareUpper(stat, df) : null,
        reason: df > 0 ? null : "the structures have the same number of parameters",
      };
    } else {
      structureTest = {
        against: "unstructured",
        statistic: null,
        df: null,
        p: null,
        reason: `the unstructured fit did not succeed: ${un.reason}`,
      };
    }
  }

  // residuals and influence
  const res = residualColumns(problem, beta, fit.likelihood.factors);
  const visitLevels = rd.visits;
  const primaryVisit = spec.repeated.primaryVisit ?? visitLevels[visitLevels.length - 1];
  if (!visitLevels.includes(primaryVisit)) {
    throw new EngineError(
      `primary visit "${primaryVisit}" is not among the visits of the records used: ${visitLevels.join(", ")}`,
    );
  }
  const primaryContrasts = vectors ? vectors.contrasts.filter((c) => c.visit === primaryVisit) : [];
  const influence = subjectInfluence(
    problem,
    beta,
    betaCovariance,
    fit.likelihood.factors,
    primaryContrasts.map((c) => c.l),
  );

  // counts per visit and arm
  const treatmentVariable = spec.treatment ? rd.data.variables.get(spec.treatment) : undefined;
  const arms = treatmentVariable && treatmentVariable.kind === "categorical" ? treatmentVariable : null;
  const counts: RepeatedResult["counts"] = [];
  visitLevels.forEach((visit, vi) => {
    const levels = arms ? arms.levels.map((_, a) => a) : [null];
    for (const a of levels) {
      let c = 0;
      for (let i = 0; i < design.n; i++)
        if (rd.rowPosition[i] === vi && (a === null || (arms as { codes: Int32Array }).codes[i] === a)) c++;
      counts.push({ visit, level: a === null || !arms ? null : arms.levels[a], subjects: c });
    }
  });

  const sd = Array.from({ length: t }, (_, a) => Math.sqrt(fit.sigma[a * t + a]));
  const correlation = new Float64Array(t * t);
  for (let a = 0; a < t; a++)
    for (let b = 0; b < t; b++) correlation[a * t + b] = fit.sigma[a * t + b] / (sd[a] * sd[b]);

  return {
    kind: "repeated",
    engineVersion: ENGINE_VERSION,
    caution: RESULTS_CAUTION,
    spec,
    method,
    dfMethod: spec.repeated.df,
    n: design.n,
    excluded: rd.data.excludedRows.length,
    excludedRows: [...rd.data.excludedRows],
    subjectCount: rd.subjects.length,
    covariance: {
      structure: fit.structure,
      planned: spec.repeated.covariance,
      attempts,
      converged: fit.converged,
      iterations: fit.iterations,
      logLik,
      aic: -2 * logLik + 2 * parameterCount,
      bic: -2 * logLik + Math.log(nEff) * parameterCount,
      parameterCount,
      visits: [...visitLevels],
      matrix: rows(fit.sigma, t),
      correlation: rows(correlation, t),
    },
    coefficients,
    coefficientCovariance: rows(inferenceCovariance, p),
    coefficientCovarianceType: kr ? "Kenward–Roger adjusted" : "model-based",
    adjustedMeans,
    tests: { treatment: treatmentTest, treatmentByVisit: interactionTest, notes: testNotes },
    structureTest,
    counts,
    residualsByCell: residualsByCell(res.normalizedResidual, rd.rowPosition, visitLevels, arms),
    observations: {
      row: Array.from(rd.data.used, (i) => rd.data.rowNumbers[i]),
      id: Array.from(rd.rowSubject, (s) => rd.subjects[s].id),
      visit: Array.from(rd.rowPosition, (v) => visitLevels[v]),
      level: Array.from(rd.rowPosition, (_, i) => (arms ? arms.levels[arms.codes[i]] : null)),
      fitted: Array.from(res.fitted),
      residual: Array.from(res.residual),
      normalizedResidual: Array.from(res.normalizedResidual),
    },
    influence: {
      method:
        "exact deletion of the subject's records with the covariance parameters held at the full-data estimate (not refitted)",
      primaryVisit,
      contrasts: primaryContrasts.map((c) => c.label),
    },
    subjects: rd.subjects.map((s, i) => ({
      id: s.id,
      records: s.rows.length,
      cooksDistance: influence.cooksDistance[i],
      treatmentChange: influence.contrastChange.map((c) => c[i]),
    })),
  };
}
