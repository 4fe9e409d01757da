/**
 * Functional form of each continuous covariate of a Cox model: the likelihood-ratio test of
 * adding the covariate's square to the planned model (1 df). It is the number behind the
 * martingale residual plot (Therneau, Grambsch and Fleming 1990), where a curved smoother shows
 * the same departure. Pure: refits the model on the same rows.
 */
import { chiSquareUpper } from "../distributions";
import { EngineError } from "../errors";
import type { ColumnTable, TypedColumn } from "../data";
import { fitCoxModel, type CoxResult } from "./cox-model";
import type { CoxSpec } from "./cox-spec";

export interface FunctionalFormTest {
  readonly term: string;
  /** LR χ² on 1 df; null when the enlarged model could not be fitted (`reason` says why). */
  readonly statistic: number | null;
  readonly p: number | null;
  readonly reason?: string;
}

/** The continuous main terms of a fitted Cox model. */
export function continuousCoxTerms(r: CoxResult): string[] {
  return r.terms.filter((t) => t.kind === "continuous").map((t) => t.label);
}

/** The square of each number of a column; other cells as they are. */
function squareColumn(cells: TypedColumn): TypedColumn {
  if (cells instanceof Float64Array) return cells.map((v) => v * v);
  return cells.map((c) => {
    if (c === null) return c;
    const v = Number(c.trim());
    return c.trim() === "" || !Number.isFinite(v) ? c : String(v * v);
  });
}

/** One test per continuous main term (in model order). */
export function coxFunctionalForm(
  spec: CoxSpec,
  table: ColumnTable,
  fitted: CoxResult,
): FunctionalFormTest[] {
  return continuousCoxTerms(fitted).map((term) => {
    const cells = table.columns[term];
    let name = `${term} squared`;
    while (name in table.columns) name = `${name}_`;
    const squared = squareColumn(cells);
    try {
      const bigger = fitCoxModel(
        { ...spec, terms: [...spec.terms, { variable: name }] },
        { columns: { ...table.columns, [name]: squared }, rowNumbers: table.rowNumbers },
      );
      const statistic = Math.max(0, 2 * (bigger.fit.logLik - fitted.fit.logLik));
      return { term, statistic, p: chiSquareUpper(statistic, 1) };
    } catch (e) {
      if (!(e instanceof EngineError)) throw e;
      return { term, statistic: null, p: null, reason: e.message };
    }
  });
}
