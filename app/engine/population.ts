/**
 * The analysis population: conditions on the data's columns that a row must all meet (a column
 * in a set of values, not in a set, or within a numeric range). The one filter every caller
 * applies before fitting (reruns, the what-if, the headless command). Rows outside the
 * population are counted by the first condition they fail, in the plan's order.
 *
 * Values compare as text, and numerically when both the cell and the value are numbers, so
 * `24` matches a cell `24.0`. A missing cell is in no set (it fails `in`, passes `notIn`) and
 * in no range.
 */
import { z } from "zod";
import { EngineError } from "./errors";
import { cellText, isMissingAt, parseNumber, selectRows, type TypedColumn } from "./data";

const valueSchema = z.union([z.string().min(1), z.number()]);

export const populationConditionSchema = z.union([
  z.object({ column: z.string().min(1), in: z.array(valueSchema).min(1) }).strict(),
  z.object({ column: z.string().min(1), notIn: z.array(valueSchema).min(1) }).strict(),
  z
    .object({ column: z.string().min(1), min: z.number().optional(), max: z.number().optional() })
    .strict()
    .refine((c) => c.min !== undefined || c.max !== undefined, {
      message: "a range condition needs min, max or both",
    })
    .refine((c) => c.min === undefined || c.max === undefined || c.min <= c.max, {
      message: "min must not exceed max",
    }),
]);
export const populationSchema = z.array(populationConditionSchema);

export type PopulationCondition = z.infer<typeof populationConditionSchema>;
export type PopulationValue = z.infer<typeof valueSchema>;

/** Rows removed by one condition (each row counted once, by the first condition it fails). */
export interface PopulationStep {
  readonly condition: string;
  readonly removed: number;
}

export interface PopulationSelection<T> {
  readonly table: T;
  /** Rows outside the population. */
  readonly excluded: number;
  readonly byCondition: readonly PopulationStep[];
}

interface Columns {
  /** Typed as stored (numbers as Float64Array with NaN for missing) or cell text. */
  readonly columns: Readonly<Record<string, TypedColumn>>;
  readonly rowNumbers: readonly number[];
}

/** The condition in plain words, e.g. "PARAMCD in ACTOT", "AGE from 18 to 64". */
export function describeCondition(c: PopulationCondition): string {
  if ("in" in c) return `${c.column} in ${c.in.join(", ")}`;
  if ("notIn" in c) return `${c.column} not in ${c.notIn.join(", ")}`;
  if (c.min !== undefined && c.max !== undefined) return `${c.column} from ${c.min} to ${c.max}`;
  return c.min !== undefined ? `${c.column} at least ${c.min}` : `${c.column} at most ${c.max}`;
}

/** Every condition in words, joined; "all rows" without conditions. */
export function describePopulation(conditions: readonly PopulationCondition[] | undefined): string {
  return conditions && conditions.length > 0 ? conditions.map(describeCondition).join("; ") : "all rows";
}

function matchesValue(column: TypedColumn, i: number, value: PopulationValue): boolean {
  if (column instanceof Float64Array) {
    const b = typeof value === "number" ? value : parseNumber(value);
    return b !== null && column[i] === b;
  }
  const text = cellText(column, i).trim();
  if (text === String(value).trim()) return true;
  const a = parseNumber(text);
  const b = typeof value === "number" ? value : parseNumber(value);
  return a !== null && b !== null && a === b;
}

/** A test of one row against one condition; throws EngineError for a range on a non-number. */
function tester(
  c: PopulationCondition,
  cells: TypedColumn,
  rowNumbers: readonly number[],
): (i: number) => boolean {
  if ("in" in c) return (i) => !isMissingAt(cells, i) && c.in.some((v) => matchesValue(cells, i, v));
  if ("notIn" in c) return (i) => isMissingAt(cells, i) || !c.notIn.some((v) => matchesValue(cells, i, v));
  return (i) => {
    if (isMissingAt(cells, i)) return false;
    const v = cells instanceof Float64Array ? cells[i] : parseNumber(cellText(cells, i));
    if (v === null) {
      throw new EngineError(
        `population condition "${describeCondition(c)}": column "${c.column}" is not numeric (data row ${rowNumbers[i]} has "${cellText(cells, i)}")`,
      );
    }
    return (c.min === undefined || v >= c.min) && (c.max === undefined || v <= c.max);
  };
}

/** Keeps the rows that meet every condition; counts the others by the first condition they fail. */
export function selectPopulation<T extends Columns>(
  table: T,
  conditions: readonly PopulationCondition[] | undefined,
): PopulationSelection<T> {
  if (!conditions || conditions.length === 0) return { table, excluded: 0, byCondition: [] };
  const tests = conditions.map((c) => {
    const cells = table.columns[c.column];
    if (!cells)
      throw new EngineError(
        `column "${c.column}" of the population condition "${describeCondition(c)}" is missing from the data`,
      );
    return tester(c, cells, table.rowNumbers);
  });
  const removed = conditions.map(() => 0);
  const keep: number[] = [];
  for (let i = 0; i < table.rowNumbers.length; i++) {
    const failed = tests.findIndex((test) => !test(i));
    if (failed < 0) keep.push(i);
    else removed[failed]++;
  }
  const columns: Record<string, TypedColumn> = {};
  for (const [name, cells] of Object.entries(table.columns)) columns[name] = selectRows(cells, keep);
  const selected = { ...table, columns, rowNumbers: keep.map((i) => table.rowNumbers[i]) };
  return {
    table: selected,
    excluded: table.rowNumbers.length - keep.length,
    byCondition: conditions.map((c, k) => ({ condition: describeCondition(c), removed: removed[k] })),
  };
}

/** The population of plans stored before conditions: one column equal to one value. */
export function populationFromLegacy(
  legacy: { column: string; value: string } | null | undefined,
): PopulationCondition[] {
  return legacy ? [{ column: legacy.column, in: [legacy.value] }] : [];
}
