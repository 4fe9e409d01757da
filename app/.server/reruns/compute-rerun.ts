/**
 * The computation of a rerun, apart from storage: the population conditions, the sensitivity
 * variant, the engine's fit, the plan's checks and the reproduction check, on the dataset
 * version's typed columns as stored (no cell text is parsed for numbers). Pure apart from its
 * inputs, and free of the database, so that it runs in a worker thread (app/.server/compute/).
 */
import { evaluateChecks, type CheckOutcome } from "~/engine/checks";
import { cellText, selectRows, type TypedColumn } from "~/engine/data";
import { withSandwichErrors } from "~/engine/glm/sandwich-errors";
import { selectPopulation, type PopulationStep } from "~/engine/population";
import { checkReproduction, reproductionAsCheck, type ReproductionResult } from "~/engine/reproduction";
import { evaluateRepeatedChecks } from "~/engine/repeated/repeated-checks";
import { fitRepeatedModel, type RepeatedResult } from "~/engine/repeated/repeated-model";
import type { RepeatedSpec } from "~/engine/repeated/repeated-spec";
import { evaluateCoxChecks } from "~/engine/survival/cox-checks";
import { fitCoxModel, type CoxResult } from "~/engine/survival/cox-model";
import type { CoxSpec } from "~/engine/survival/cox-spec";
import { restrictedMeanByArm, type RestrictedMeanDifference } from "~/engine/survival/rmst";
import { coxFunctionalForm, type FunctionalFormTest } from "~/engine/survival/functional-form";
import {
  EngineError,
  ENGINE_VERSION,
  fitModel,
  fitWithEstimatedVariance,
  fitWithRobustErrors,
  RESULTS_CAUTION,
  type ModelResult,
  type ModelSpec,
  type Term,
} from "~/engine";
import { populationOf } from "../plans/planned-model";
import type { StoredPlannedModel } from "../plans/plans.server";
import type { DocumentPopulation } from "./rerun-population";
import { describeOptions, type RerunOptions } from "./rerun-options";

/** Everything a rerun stored: the engine's result, the plan's checks evaluated on it, and its inputs. */
export interface RerunDocument {
  engineVersion: string;
  caution: string;
  datasetSha256: string;
  planVersionId: string;
  plannedModel: { key: string; title: string };
  options: RerunOptions;
  description: string;
  rows: {
    inFile: number;
    outsidePopulation: number;
    excludedByOption: number;
    missingCells: number;
    used: number;
  };
  /** The population conditions (documents stored before conditions hold one column = value, or null). */
  population: DocumentPopulation;
  /** Rows removed by each population condition, in the plan's order (absent in older documents). */
  populationSteps?: PopulationStep[];
  /** Linear, generalized linear, Cox (`kind` "cox") or repeated measures (`kind` "repeated"): narrow on `result.kind`. */
  result: ModelResult | CoxResult | RepeatedResult;
  checks: CheckOutcome[];
  /** Cox reruns: the likelihood-ratio test of an added square per continuous covariate (the functional-form check and figures read it). */
  coxFunctionalForm?: FunctionalFormTest[];
  /** Cox reruns of the restricted-mean analysis: each arm against the reference, to the horizon τ. */
  restrictedMean?: RestrictedMeanDifference[];
  /** The planned analysis of a model whose plan gives published values: the reproduction check (reproduction.ts). */
  reproduction?: ReproductionResult;
}

/** The reproduction check as one of the rerun's checks (key "reproduction"), when the plan gives published values. */
export function reproductionCheckOf(doc: Pick<RerunDocument, "reproduction">) {
  return doc.reproduction ? reproductionAsCheck(doc.reproduction) : null;
}

/** The columns a rerun reads: typed as stored (numbers as Float64Array, text with null), or cell text. */
export interface RerunTable {
  columns: Record<string, TypedColumn>;
  rowNumbers: number[];
}

function filterRows(table: RerunTable, keep: (i: number) => boolean): RerunTable {
  const idx: number[] = [];
  for (let i = 0; i < table.rowNumbers.length; i++) if (keep(i)) idx.push(i);
  const columns: Record<string, TypedColumn> = {};
  for (const [k, v] of Object.entries(table.columns)) columns[k] = selectRows(v, idx);
  return { columns, rowNumbers: idx.map((i) => table.rowNumbers[i]) };
}

/** The alternative covariate set: the treatment plus the chosen covariates, as the plan defines them. */
function alternativeSpec<S extends Pick<ModelSpec, "terms" | "treatment">>(spec: S, covariates: string[]): S {
  const main = spec.terms.filter((t): t is Extract<Term, { variable: string }> => "variable" in t);
  const keep = new Set([...(spec.treatment ? [spec.treatment] : []), ...covariates]);
  const terms: Term[] = [
    ...main.filter((t) => keep.has(t.variable)),
    ...covariates.filter((c) => !main.some((t) => t.variable === c)).map((variable) => ({ variable })),
    ...spec.terms.filter(
      (t): t is Extract<Term, { interaction: string[] }> =>
        "interaction" in t && t.interaction.every((v) => keep.has(v)),
    ),
  ];
  return { ...spec, terms };
}

/** The Cox specification a rerun fits: the planned one, or the sensitivity analysis's variant of it. */
function coxVariantSpec(planned: CoxSpec, options: RerunOptions): CoxSpec {
  switch (options.variant) {
    case "planned":
    case "exclude_rows":
    case "cox_rmst":
      return planned;
    case "alternative_covariates":
      return alternativeSpec(planned, options.covariates);
    case "cox_robust_subject":
      if (!planned.id)
        throw new EngineError(
          "robust errors clustered by subject need the subject identifier column in the planned model",
        );
      return { ...planned, cluster: planned.id };
    case "cox_unstratified":
      return { ...planned, strata: [] };
    default:
      throw new EngineError(
        `the ${describeOptions(options).toLowerCase()} analysis does not apply to a time-to-event (Cox) model`,
      );
  }
}

/**
 * The repeated-measures specification a rerun fits: the planned one, or its sensitivity variant.
 * The alternative covariate set keeps the visit (the model's time axis) and its interactions among
 * the kept variables; another structure is fitted alone, without the plan's fallbacks (a fallback
 * that converged would refit a structure already reported).
 */
function repeatedVariantSpec(planned: RepeatedSpec, options: RerunOptions): RepeatedSpec {
  switch (options.variant) {
    case "planned":
    case "exclude_rows":
      return planned;
    case "alternative_covariates":
      return alternativeSpec(planned, [
        planned.repeated.visit,
        ...options.covariates.filter((c) => c !== planned.repeated.visit),
      ]);
    case "repeated_structure":
      return { ...planned, repeated: { ...planned.repeated, covariance: options.structure, fallback: [] } };
    default:
      throw new EngineError(
        `the ${describeOptions(options).toLowerCase()} analysis does not apply to a repeated-measures (MMRM) model`,
      );
  }
}

/** The restricted mean survival time difference by arm, on the subjects the Cox model used. */
function restrictedMeanOf(
  spec: CoxSpec,
  working: RerunTable,
  result: CoxResult,
  tau: number,
): RestrictedMeanDifference[] {
  const treatment = spec.treatment;
  const cells = treatment ? working.columns[treatment] : undefined;
  if (!treatment || !cells)
    throw new EngineError("a restricted mean survival time difference needs the treatment column");
  const indexOf = new Map(working.rowNumbers.map((r, i) => [r, i]));
  const arm = result.observations.row.map((r) => cellText(cells, indexOf.get(r) as number).trim());
  const levels = result.survival
    .filter((s) => s.stratum === null && s.level !== null)
    .map((s) => s.level as string);
  const term = spec.terms.find((x) => "variable" in x && x.variable === treatment);
  const reference = (term && "reference" in term && term.reference) || levels[0];
  return restrictedMeanByArm(
    result.observations.time,
    result.observations.status,
    arm,
    levels,
    reference,
    tau,
  );
}

/** Fits the planned model (or its sensitivity variant) and evaluates the plan's checks. Pure apart from the inputs given. */
export function computeRerun(
  model: StoredPlannedModel,
  table: RerunTable,
  options: RerunOptions,
  meta: { datasetSha256: string; planVersionId: string },
): RerunDocument {
  const inFile = table.rowNumbers.length;
  const population = selectPopulation(table, populationOf(model));
  let working = population.table;
  const inPopulation = working.rowNumbers.length;
  if (options.variant === "exclude_rows") {
    const drop = new Set(options.rows);
    working = filterRows(working, (i) => !drop.has(working.rowNumbers[i]));
  }
  const excludedByOption = inPopulation - working.rowNumbers.length;
  const doc = (result: RerunDocument["result"], checks: CheckOutcome[]): RerunDocument => ({
    engineVersion: ENGINE_VERSION,
    caution: RESULTS_CAUTION,
    datasetSha256: meta.datasetSha256,
    planVersionId: meta.planVersionId,
    plannedModel: { key: model.key, title: model.title },
    options,
    description: describeOptions(options),
    rows: {
      inFile,
      outsidePopulation: inFile - inPopulation,
      excludedByOption,
      missingCells: result.excluded,
      used: result.n,
    },
    population: populationOf(model),
    populationSteps: [...population.byCondition],
    result,
    checks,
  });
  if ("repeated" in model.spec) {
    const spec = repeatedVariantSpec(model.spec, options);
    // the plan's adjusted-means weighting, as the linear fit reads it from its specification
    const result = fitRepeatedModel(spec, working, { meansWeighting: spec.means ?? "equal" });
    const published = options.variant === "planned" ? (spec.published ?? []) : [];
    return {
      ...doc(result, evaluateRepeatedChecks(result, model.checks)),
      ...(published.length > 0 ? { reproduction: checkReproduction(result, published) } : {}),
    };
  }
  if (model.spec.family === "cox") {
    const coxSpec = coxVariantSpec(model.spec, options);
    const result = fitCoxModel(coxSpec, working);
    const functionalForm = coxFunctionalForm(coxSpec, working, result);
    const restrictedMean =
      options.variant === "cox_rmst" ? restrictedMeanOf(coxSpec, working, result, options.tau) : undefined;
    return {
      ...doc(result, evaluateCoxChecks(result, model.checks, functionalForm)),
      coxFunctionalForm: functionalForm,
      ...(restrictedMean ? { restrictedMean } : {}),
    };
  }
  const planned = model.spec;
  let spec =
    options.variant === "alternative_covariates" ? alternativeSpec(planned, options.covariates) : planned;
  if (options.variant === "family") {
    if (spec.family !== "poisson")
      throw new EngineError(
        `a ${options.family} analysis applies to a Poisson model of counts, not to a ${spec.family} model`,
      );
    spec = { ...spec, family: options.family };
  }
  if (options.variant === "variance_function" && spec.family !== "gaussian") {
    throw new EngineError(
      `the ${describeOptions(options).toLowerCase()} remedy applies to linear models, not to a ${spec.family} model`,
    );
  }
  let result: ModelResult;
  switch (options.variant) {
    case "robust_hc3":
      if (spec.family === "gaussian") {
        result = fitWithRobustErrors(spec, working, "HC3");
      } else {
        const glm = fitModel(spec, working);
        if (glm.kind !== "glm")
          throw new EngineError("robust errors of a generalized linear model need its fit");
        result = withSandwichErrors(glm, "HC3");
      }
      break;
    case "variance_function":
      result = fitWithEstimatedVariance(spec, working, options.varianceBy);
      break;
    default:
      result = fitModel(spec, working);
  }
  const published = options.variant === "planned" ? (spec.published ?? []) : [];
  return {
    ...doc(result, evaluateChecks(result, model.checks)),
    ...(published.length > 0 ? { reproduction: checkReproduction(result, published) } : {}),
  };
}
