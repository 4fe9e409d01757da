/**
 * Column types and summaries, computed in one pass over each column's cells.
 * Missing cells are empty, `NA` or `.`, as the engine reads them (app/engine/data.ts).
 */
import { isMissingCell, orderLevels, parseNumber } from "../../engine/data";
import type { ColumnMeta, ColumnType } from "../../shared/datasets";
import { MAX_CODED_LEVELS } from "./categorical-hint";

export type { ColumnMeta, ColumnType };

export const MAX_LEVELS = 50;

/** ISO 8601 calendar date, YYYY-MM-DD. */
const DATE = /^\d{4}-(0[1-9]|1[0-2])-(0[1-9]|[12]\d|3[01])$/;
/** ISO 8601 date and time, minutes or seconds (fractions allowed), optional zone. */
const DATETIME =
  /^\d{4}-(0[1-9]|1[0-2])-(0[1-9]|[12]\d|3[01])T([01]\d|2[0-3]):[0-5]\d(:[0-5]\d(\.\d+)?)?(Z|[+-]([01]\d|2[0-3]):?[0-5]\d)?$/;

export function isIsoDate(cell: string): boolean {
  return DATE.test(cell) && !Number.isNaN(Date.parse(cell));
}

export function isIsoDateTime(cell: string): boolean {
  return DATETIME.test(cell);
}

/** The narrowest type every non-missing cell fits: number, then date, then datetime, else text. */
export function inferType(cells: readonly string[]): ColumnType {
  let number = true;
  let date = true;
  let datetime = true;
  let seen = 0;
  for (const raw of cells) {
    if (isMissingCell(raw)) continue;
    seen++;
    const cell = raw.trim();
    if (number && parseNumber(cell) === null) number = false;
    if (date && !isIsoDate(cell)) date = false;
    if (datetime && !isIsoDateTime(cell)) datetime = false;
    if (!number && !date && !datetime) return "text";
  }
  if (seen === 0) return "text";
  return number ? "number" : date ? "date" : datetime ? "datetime" : "text";
}

/**
 * Summary of one column. Mean and standard deviation by Welford's one-pass update
 * (Welford 1962, Technometrics 4:419); SD with the n - 1 divisor.
 */
export function summariseColumn(
  name: string,
  label: string | null,
  type: ColumnType,
  cells: readonly string[],
): ColumnMeta {
  let missing = 0;
  const meta: ColumnMeta = { name, label, type, nonMissing: 0, missing: 0 };
  if (type === "number") {
    let n = 0;
    let mean = 0;
    let m2 = 0;
    let min = Infinity;
    let max = -Infinity;
    // Distinct whole numbers, by their text as the engine reads levels, until a fraction or too many.
    let codes: Map<string, number> | null = new Map();
    for (const cell of cells) {
      if (isMissingCell(cell)) {
        missing++;
        continue;
      }
      const x = parseNumber(cell) as number;
      if (codes) {
        if (!Number.isInteger(x)) codes = null;
        else {
          codes.set(cell, (codes.get(cell) ?? 0) + 1);
          if (codes.size > MAX_CODED_LEVELS) codes = null;
        }
      }
      n++;
      const d = x - mean;
      mean += d / n;
      m2 += d * (x - mean);
      if (x < min) min = x;
      if (x > max) max = x;
    }
    meta.nonMissing = n;
    if (n > 0) Object.assign(meta, { min, max, mean, sd: n > 1 ? Math.sqrt(m2 / (n - 1)) : undefined });
    if (codes && codes.size >= 2) {
      const counted = codes;
      meta.levels = orderLevels(counted.keys()).map((value) => ({
        value,
        count: counted.get(value) as number,
      }));
    }
  } else {
    const counts = new Map<string, number>();
    let tooMany = false;
    let earliest: string | undefined;
    let latest: string | undefined;
    for (const raw of cells) {
      if (isMissingCell(raw)) {
        missing++;
        continue;
      }
      meta.nonMissing++;
      if (type === "text") {
        if (!tooMany) {
          counts.set(raw, (counts.get(raw) ?? 0) + 1);
          if (counts.size > MAX_LEVELS) tooMany = true;
        }
      } else {
        const v = raw.trim();
        if (earliest === undefined || v < earliest) earliest = v;
        if (latest === undefined || v > latest) latest = v;
      }
    }
    if (type === "text" && !tooMany && counts.size > 0) {
      meta.levels = orderLevels(counts.keys()).map((value) => ({
        value,
        count: counts.get(value) as number,
      }));
    }
    if (earliest !== undefined) Object.assign(meta, { earliest, latest });
  }
  meta.missing = missing;
  for (const k of Object.keys(meta) as (keyof ColumnMeta)[]) if (meta[k] === undefined) delete meta[k];
  return meta;
}
