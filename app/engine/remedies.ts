/**
 * Remedies for a finding of unequal residual spread, each a full result that can be shown beside
 * the planned fit: a weighted fit with a weights column, weights from an estimated variance
 * function (feasible weighted least squares: a regression of log ẽ² on the fitted values, or the
 * residual variance per treatment arm; Carroll and Ruppert 1988, Transformation and Weighting in
 * Regression, chapter 3), and heteroscedasticity-consistent standard errors.
 */
import { cellText, toDataTable, type DataTable, type TableInput } from "./data";
import { EngineError } from "./errors";
import {
  fitLinearModel,
  plannedResiduals,
  type CovarianceType,
  type FitOptions,
  type LinearModelResult,
} from "./linear-model";
import { parseModelSpec, type ModelSpec, type ModelSpecInput } from "./model-spec";

function inputs(
  spec: ModelSpec | ModelSpecInput,
  table: TableInput | DataTable,
): { spec: ModelSpec; table: DataTable } {
  const t = "nRows" in table && "names" in table ? (table as DataTable) : toDataTable(table as TableInput);
  return { spec: parseModelSpec(spec), table: t };
}

/** The planned model refitted with prior weights from a column. */
export function fitWithWeightsColumn(
  specInput: ModelSpec | ModelSpecInput,
  tableInput: TableInput | DataTable,
  column: string,
  options: FitOptions = {},
): LinearModelResult {
  const { spec, table } = inputs(specInput, tableInput);
  return fitLinearModel({ ...spec, weights: column }, table, {
    ...options,
    method: { kind: "weighted", description: `weighted least squares with weights from column "${column}"` },
  });
}

export type VarianceModel = "fitted" | "treatment";

/**
 * The planned model refitted with weights 1/v̂ᵢ (times any prior weight), v̂ from
 * log ẽ² = a + b·ŷ (model "fitted") or the mean ẽ² of each treatment arm (model "treatment");
 * weights are scaled to mean one.
 */
export function fitWithEstimatedVariance(
  specInput: ModelSpec | ModelSpecInput,
  tableInput: TableInput | DataTable,
  model: VarianceModel,
  options: FitOptions = {},
): LinearModelResult {
  const { spec, table } = inputs(specInput, tableInput);
  // the planned fit's residuals only: its diagnostics and tests are not read here
  const obs = plannedResiduals(spec, table, options);
  const n = obs.n;
  const e2 = Array.from(obs.scaledResidual, (e) => e * e);
  const meanE2 = e2.reduce((s, v) => s + v, 0) / n;
  const variance = new Float64Array(n);
  let description: string;
  if (model === "fitted") {
    const floor = meanE2 * 1e-8;
    const y = e2.map((v) => Math.log(Math.max(v, floor)));
    const x = obs.fitted;
    const mx = x.reduce((s, v) => s + v, 0) / n;
    const my = y.reduce((s, v) => s + v, 0) / n;
    let sxy = 0;
    let sxx = 0;
    for (let i = 0; i < n; i++) {
      sxy += (x[i] - mx) * (y[i] - my);
      sxx += (x[i] - mx) ** 2;
    }
    const b = sxx > 0 ? sxy / sxx : 0;
    for (let i = 0; i < n; i++) variance[i] = Math.exp(my + b * (x[i] - mx));
    description = `weighted least squares with weights from the estimated variance function log e² = a + b·fitted (b = ${b.toPrecision(4)})`;
  } else {
    if (!spec.treatment)
      throw new EngineError("a variance per treatment arm needs the model's treatment to be named");
    const arm = spec.treatment;
    const cells = table.columns[arm];
    const sums = new Map<string, { s: number; k: number }>();
    const labels = obs.row.map((_, i) => cellText(cells, rowIndex(table, obs.row[i])));
    labels.forEach((l, i) => {
      const g = sums.get(l) ?? { s: 0, k: 0 };
      g.s += e2[i];
      g.k += 1;
      sums.set(l, g);
    });
    labels.forEach((l, i) => {
      const g = sums.get(l) as { s: number; k: number };
      variance[i] = Math.max(g.s / g.k, meanE2 * 1e-8);
    });
    description = `weighted least squares with weights from the residual variance of each arm of "${arm}"`;
  }
  const weights = new Float64Array(n);
  let sum = 0;
  for (let i = 0; i < n; i++) {
    weights[i] = (obs.weight ? obs.weight[i] : 1) / variance[i];
    sum += weights[i];
  }
  for (let i = 0; i < n; i++) weights[i] *= n / sum;
  return fitLinearModel(spec, table, {
    ...options,
    weightsOverride: weights,
    method: { kind: "estimated-variance", description },
  });
}

function rowIndex(table: DataTable, rowNumber: number): number {
  // row numbers are increasing; a direct hit is the common case
  const guess = rowNumber - 1;
  if (table.rowNumbers[guess] === rowNumber) return guess;
  return table.rowNumbers.indexOf(rowNumber);
}

/** The planned model with heteroscedasticity-consistent standard errors in its coefficient table. */
export function fitWithRobustErrors(
  specInput: ModelSpec | ModelSpecInput,
  tableInput: TableInput | DataTable,
  type: Exclude<CovarianceType, "model"> = "HC3",
  options: FitOptions = {},
): LinearModelResult {
  const { spec, table } = inputs(specInput, tableInput);
  return fitLinearModel(spec, table, {
    ...options,
    covariance: type,
    method: {
      kind: "robust",
      description: `least squares with ${type} heteroscedasticity-consistent standard errors`,
    },
  });
}
