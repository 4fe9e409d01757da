/**
 * The numerical core for large designs: a least-squares fit and every observation-level
 * diagnostic straight from a column-major Float64Array design, choosing how to use memory.
 * Up to LARGE_DESIGN_CELLS cells the design is kept (coefficients get a refinement step, partial
 * residuals read the design); above it the design's own storage becomes Q, saving one n×p array
 * at peak, and partial residuals are rebuilt from Q and R.
 */
import {
  observationDiagnostics,
  partialResiduals,
  partialResidualsFromQR,
  type ObservationDiagnostics,
} from "./diagnostics";
import { leastSquares, type LeastSquaresFit, type LeastSquaresInput } from "./least-squares";

/** Above this many design cells (n·p) the design's storage is reused for Q. */
export const LARGE_DESIGN_CELLS = 30_000_000;

export interface CoreFitWithDiagnostics {
  readonly fit: LeastSquaresFit;
  readonly diagnostics: ObservationDiagnostics;
  readonly partialResiduals: Float64Array[];
  /** True when the design array was overwritten (it then holds Q). */
  readonly designReused: boolean;
}

/** Fits and computes the diagnostics; returns null when the design's columns are aliased. */
export function fitWithObservationDiagnostics(
  input: LeastSquaresInput,
  termColumns: readonly (readonly number[])[],
): CoreFitWithDiagnostics | null {
  const reuse = input.n * input.p > LARGE_DESIGN_CELLS;
  const outcome = leastSquares(input, undefined, { overwriteDesign: reuse });
  if (!outcome.ok) return null;
  const fit = outcome.fit;
  const diagnostics = observationDiagnostics(fit);
  const partial = reuse
    ? partialResidualsFromQR(fit, termColumns)
    : partialResiduals(input.x, input.n, termColumns, fit.coefficients, fit.residuals);
  return { fit, diagnostics, partialResiduals: partial, designReused: reuse };
}
