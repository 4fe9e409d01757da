/**
 * Marginal fitted values Xβ̂, raw residuals y − Xβ̂ and normalized residuals: for each subject,
 * Lᵢ⁻¹rᵢ with Lᵢ the lower Cholesky factor of the covariance over its observed visits in visit
 * order (uncorrelated with unit variance when the model holds; nlme's "normalized" residuals).
 */
import type { LikelihoodProblem, PatternFactor } from "./likelihood";

export interface ResidualColumns {
  readonly fitted: Float64Array;
  readonly residual: Float64Array;
  readonly normalizedResidual: Float64Array;
}

export function residualColumns(
  problem: LikelihoodProblem,
  beta: Float64Array,
  factors: readonly PatternFactor[],
): ResidualColumns {
  const { n, p, x, y } = problem;
  const fitted = new Float64Array(n);
  const residual = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < p; j++) s += x[j * n + i] * beta[j];
    fitted[i] = s;
    residual[i] = y[i] - s;
  }
  const normalizedResidual = new Float64Array(n);
  problem.subjects.forEach((subject, si) => {
    const { l, m } = factors[si];
    const z = new Float64Array(m);
    for (let a = 0; a < m; a++) {
      let s = residual[subject.rows[a]];
      for (let b = 0; b < a; b++) s -= l[a * m + b] * z[b];
      z[a] = s / l[a * m + a];
      normalizedResidual[subject.rows[a]] = z[a];
    }
  });
  return { fitted, residual, normalizedResidual };
}

/** Normalized residuals summarized per visit and arm (records, mean, SD), for spread checks by cell. */
export interface ResidualCell {
  readonly visit: string;
  readonly level: string | null;
  readonly records: number;
  readonly mean: number;
  /** Sample SD (n − 1); NaN with fewer than two records. */
  readonly sd: number;
}

export function residualsByCell(
  normalized: Float64Array,
  rowPosition: Int32Array,
  visits: readonly string[],
  arms: { readonly levels: readonly string[]; readonly codes: Int32Array } | null,
): ResidualCell[] {
  const levels = arms ? arms.levels.length : 1;
  const count = new Float64Array(visits.length * levels);
  const sum = new Float64Array(visits.length * levels);
  for (let i = 0; i < normalized.length; i++) {
    const cell = rowPosition[i] * levels + (arms ? arms.codes[i] : 0);
    count[cell]++;
    sum[cell] += normalized[i];
  }
  const squares = new Float64Array(visits.length * levels);
  for (let i = 0; i < normalized.length; i++) {
    const cell = rowPosition[i] * levels + (arms ? arms.codes[i] : 0);
    squares[cell] += (normalized[i] - sum[cell] / count[cell]) ** 2;
  }
  const out: ResidualCell[] = [];
  visits.forEach((visit, v) => {
    for (let a = 0; a < levels; a++) {
      const cell = v * levels + a;
      out.push({
        visit,
        level: arms ? arms.levels[a] : null,
        records: count[cell],
        mean: count[cell] > 0 ? sum[cell] / count[cell] : NaN,
        sd: count[cell] > 1 ? Math.sqrt(squares[cell] / (count[cell] - 1)) : NaN,
      });
    }
  });
  return out;
}
