/**
 * The overall test of the treatment term. Linear models: the Wald F of the term's coefficients,
 * b'(LVL')⁻¹b / q with the model-based covariance, on q and the residual degrees of freedom;
 * without treatment interactions it equals the partial F of dropping the term (the type II test
 * of R's car::Anova). Generalized linear models: the likelihood-ratio χ² of the model against
 * the model without the term (glm-model.ts computes it from a refit).
 */
import { choleskySolveSymmetric } from "./treatment-test-solve";
import { fUpper } from "./distributions";

export interface TreatmentFTest {
  readonly term: string;
  readonly statistic: number | null;
  readonly df1: number;
  readonly df2: number;
  readonly p: number | null;
  /** Why the test is not given (null statistic). */
  readonly reason?: string;
}

export interface TreatmentChiSquareTest {
  readonly term: string;
  readonly statistic: number | null;
  readonly df: number;
  readonly p: number | null;
  readonly reason?: string;
}

/** Why a treatment term has no overall test of its own, or null when it has one. */
export function treatmentTestProblem(
  treatment: string,
  interactions: readonly (readonly string[])[],
): string | null {
  return interactions.some((parts) => parts.includes(treatment))
    ? `${treatment} enters an interaction, so its main-effect coefficients depend on the coding of the other variables; no overall test of the term alone is given`
    : null;
}

/** Wald F of the coefficients `columns` (covariance column-major p×p). */
export function waldF(
  term: string,
  coefficients: ArrayLike<number>,
  covariance: ArrayLike<number>,
  p: number,
  columns: readonly number[],
  dfResidual: number,
): TreatmentFTest {
  const q = columns.length;
  const sub = new Float64Array(q * q);
  for (let a = 0; a < q; a++)
    for (let b = 0; b < q; b++) sub[a * q + b] = covariance[columns[b] * p + columns[a]];
  const b = Float64Array.from(columns, (c) => coefficients[c]);
  const solved = choleskySolveSymmetric(sub, q, b);
  if (!solved)
    return {
      term,
      statistic: null,
      df1: q,
      df2: dfResidual,
      p: null,
      reason: "the covariance of the treatment coefficients is singular",
    };
  let quad = 0;
  for (let a = 0; a < q; a++) quad += b[a] * solved[a];
  const statistic = quad / q;
  return { term, statistic, df1: q, df2: dfResidual, p: fUpper(statistic, q, dfResidual) };
}
