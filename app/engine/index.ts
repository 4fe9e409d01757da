/**
 * Public API of the Plumbline statistics engine: pure, deterministic functions from a model
 * specification and parsed table cells to a full result. No I/O.
 */
import { toDataTable, type TableInput } from "./data";
import { EngineError } from "./errors";
import { fitLinearModel, type FitOptions, type LinearModelResult } from "./linear-model";
import { parseModelSpec, type ModelSpec, type ModelSpecInput } from "./model-spec";
import { fitGlmModel, type GlmOptions, type GlmResult } from "./glm/glm-model";

/** A rerun's full result: linear (gaussian) or generalized linear model. */
export type ModelResult = LinearModelResult | GlmResult;

/**
 * Reruns a model: validates the specification, reads the table (complete cases), fits and
 * computes every diagnostic. Throws EngineError with a one-line message on bad input.
 */
export function fitModel(
  spec: ModelSpec | ModelSpecInput | unknown,
  table: TableInput,
  options: FitOptions & GlmOptions = {},
): ModelResult {
  const parsed = parseModelSpec(spec);
  const data = toDataTable(table);
  if (data.nRows === 0) throw new EngineError("the data has no rows");
  if (parsed.family === "gaussian") return fitLinearModel(parsed, data, options);
  return fitGlmModel(parsed, data, options);
}

/** fitModel for a gaussian specification, typed as the linear result. */
export function fitLinear(
  spec: ModelSpec | ModelSpecInput | unknown,
  table: TableInput,
  options: FitOptions = {},
): LinearModelResult {
  const result = fitModel(spec, table, options);
  if (result.kind !== "linear") throw new EngineError("the specification is not a linear (gaussian) model");
  return result;
}

export { EngineError } from "./errors";
export { ENGINE_VERSION, RESULTS_CAUTION } from "./version";
export { modelSpecSchema, parseModelSpec, CANONICAL_LINK } from "./model-spec";
export type { ModelSpec, ModelSpecInput, Term, MainTerm, InteractionTerm, Family, Link } from "./model-spec";
export {
  toDataTable,
  isMissingCell,
  isMissingAt,
  cellText,
  selectRows,
  parseNumber,
  orderLevels,
} from "./data";
export type { TableInput, RowTable, ColumnTable, TextColumnTable, TypedColumn, DataTable } from "./data";
export type {
  LinearModelResult,
  FitOptions,
  CoefficientRow,
  FitSummary,
  ObservationColumns,
  AssumptionTests,
  CovarianceType,
  FitMethod,
  VariableSummary,
} from "./linear-model";
export type { AdjustedMean, Contrast, MeansWeighting } from "./adjusted-means";
export type { VifRow } from "./vif";
export type { QqShape, QqReading } from "./qq-shape";
export type { NormalityTest, AndersonDarlingTest } from "./normality";
export type { BreuschPaganTest, FTest } from "./spread";
export type { HomogeneityOfSlopes, SlopeTest } from "./specification-tests";
export { fitWithWeightsColumn, fitWithEstimatedVariance, fitWithRobustErrors } from "./remedies";
export type { VarianceModel } from "./remedies";
export { toCliResult, stringifyResult } from "./cli-result";
export { shapiroWilk, andersonDarling, lilliefors } from "./normality";
export { breuschPagan, brownForsythe } from "./spread";
export { readQqShape } from "./qq-shape";
export { leastSquares } from "./least-squares";
export type { LeastSquaresFit, LeastSquaresInput } from "./least-squares";
export { observationDiagnostics } from "./diagnostics";
export type { ObservationDiagnostics } from "./diagnostics";
export * as distributions from "./distributions";
export { partialResiduals, partialResidualsFromQR, robustCovariances } from "./diagnostics";
export { fitGlmModel, SeparationError } from "./glm/glm-model";
export type {
  GlmResult,
  GlmOptions,
  GlmCoefficientRow,
  GlmFitSummary,
  GlmObservationColumns,
  GlmChecks,
  RatioRow,
} from "./glm/glm-model";
export type { MarginalEffects, MarginalMean, MarginalContrast } from "./glm/marginal-effects";
export type { ProfileInterval } from "./glm/profile-intervals";
export type { OverdispersionCheck, LikelihoodRatioTest, Calibration, BinnedResidual } from "./glm/glm-checks";
export { fitWithObservationDiagnostics, LARGE_DESIGN_CELLS } from "./large-data";
export type { CoreFitWithDiagnostics } from "./large-data";
export { fitCoxModel, MonotoneLikelihoodError } from "./survival/cox-model";
export type {
  CoxResult,
  CoxCoefficientRow,
  HazardRatioRow,
  CoxObservationColumns,
  SchoenfeldRow,
  SurvivalByGroup,
} from "./survival/cox-model";
export { coxSpecSchema, parseCoxSpec, isCoxSpec } from "./survival/cox-spec";
export type { CoxSpec, CoxSpecInput, Ties, TimeTransform } from "./survival/cox-spec";
export { toCoxCliResult } from "./survival/cox-result";
export type { ProportionalHazardsTest, ChiSquareTest } from "./survival/proportional-hazards";
export type { LogRankTest } from "./survival/log-rank";
export { fitRepeatedModel } from "./repeated/repeated-model";
export type {
  RepeatedResult,
  RepeatedOptions,
  RepeatedCoefficient,
  VisitCovariance,
  VisitMean,
  VisitContrast,
  RepeatedTest,
  StructureTest,
  StructureAttempt,
  RepeatedObservationColumns,
  SubjectRow,
} from "./repeated/repeated-model";
export {
  repeatedSpecSchema,
  parseRepeatedSpec,
  isRepeatedSpec,
  covarianceStructureSchema,
} from "./repeated/repeated-spec";
export type {
  RepeatedSpec,
  RepeatedSpecInput,
  CovarianceStructureName,
  RepeatedDf,
  RepeatedMethod,
} from "./repeated/repeated-spec";
export { toRepeatedCliResult } from "./repeated/repeated-result";
