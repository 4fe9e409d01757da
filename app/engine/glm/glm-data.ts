/**
 * Response checks of the generalized linear models: a binary response is 0/1 or a two-level
 * column with its event level named; counts are non-negative integers; offsets are finite.
 */
import {
  cellText,
  isMissingAt,
  isMissingCell,
  orderLevels,
  parseNumber,
  type DataTable,
  type TypedColumn,
} from "../data";
import type { PreparedData } from "../design";
import { EngineError } from "../errors";
import type { ModelSpec } from "../model-spec";

const NON_FINITE = /^[+-]?(inf|infinity|nan)$/i;

/** The distinct non-missing labels of a column (numbers as their text), in order of first appearance. */
function presentLabels(cells: TypedColumn): string[] {
  const seen = new Set<string>();
  if (cells instanceof Float64Array) {
    const values = new Set<number>();
    for (let i = 0; i < cells.length; i++) if (!Number.isNaN(cells[i])) values.add(cells[i]);
    for (const v of values) seen.add(String(v));
    return [...seen];
  }
  for (const c of cells) if (!isMissingCell(c)) seen.add(c as string);
  return [...seen];
}

/** Rewrites a two-level binomial response as 0/1 (the event level as 1); checks offsets. */
export function prepareGlmTable(spec: ModelSpec, table: DataTable): DataTable {
  if (spec.offset && spec.offset in table.columns) {
    const cells = table.columns[spec.offset];
    if (!(cells instanceof Float64Array)) {
      cells.forEach((cell, i) => {
        if (cell !== null && NON_FINITE.test(cell.trim())) {
          throw new EngineError(
            `offset column "${spec.offset}" has a non-finite value ("${cell}") at data row ${table.rowNumbers[i]}`,
          );
        }
      });
    }
  }
  if (spec.family !== "binomial" || !(spec.response in table.columns)) return table;
  const cells = table.columns[spec.response];
  const levels = orderLevels(presentLabels(cells));
  if (levels.length > 2) {
    throw new EngineError(
      `binary response "${spec.response}" has more than two levels: ${levels.join(", ")}`,
    );
  }
  const zeroOne = levels.every((l) => parseNumber(l) === 0 || parseNumber(l) === 1);
  if (spec.event === undefined) {
    if (zeroOne) return table;
    throw new EngineError(
      `binary response "${spec.response}" has levels ${levels.join(", ")}; name the level counted as the event with "event"`,
    );
  }
  if (!levels.includes(spec.event)) {
    throw new EngineError(
      `event level "${spec.event}" is not present in "${spec.response}"; levels: ${levels.join(", ")}`,
    );
  }
  const mapped = new Float64Array(table.nRows);
  for (let i = 0; i < table.nRows; i++)
    mapped[i] = isMissingAt(cells, i) ? Number.NaN : cellText(cells, i) === spec.event ? 1 : 0;
  return { ...table, columns: { ...table.columns, [spec.response]: mapped } };
}

/** Checks the used responses: 0/1 with both outcomes present, or non-negative integer counts. */
export function checkGlmResponse(spec: ModelSpec, data: PreparedData): void {
  const y = data.response;
  const rowOf = (k: number) => data.rowNumbers[data.used[k]];
  if (spec.family === "binomial") {
    let events = 0;
    for (let k = 0; k < y.length; k++) {
      if (y[k] !== 0 && y[k] !== 1) {
        throw new EngineError(
          `binary response "${spec.response}" must be 0 or 1: data row ${rowOf(k)} has ${y[k]}`,
        );
      }
      events += y[k];
    }
    if (events === 0)
      throw new EngineError(
        `response "${spec.response}" has no events in the rows used; a binary model cannot be fitted`,
      );
    if (events === y.length)
      throw new EngineError(
        `response "${spec.response}" is an event in every row used; a binary model cannot be fitted`,
      );
    return;
  }
  let total = 0;
  for (let k = 0; k < y.length; k++) {
    if (y[k] < 0 || !Number.isInteger(y[k])) {
      throw new EngineError(
        `count response "${spec.response}" must be a non-negative integer: data row ${rowOf(k)} has ${y[k]}`,
      );
    }
    total += y[k];
  }
  if (total === 0)
    throw new EngineError(
      `count response "${spec.response}" is zero in every row used; there are no events to model`,
    );
}
