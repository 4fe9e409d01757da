/** What the tests and adjusted means read from a fitted linear model (built by linear-model.ts). */
import type { Design, PreparedData } from "./design";
import type { LeastSquaresFit } from "./least-squares";
import type { ModelSpec } from "./model-spec";

export interface LinearFitContext {
  readonly spec: ModelSpec;
  readonly data: PreparedData;
  readonly design: Design;
  readonly fit: LeastSquaresFit;
  /** Weights used in the fit, or null. */
  readonly weights: Float64Array | null;
}
