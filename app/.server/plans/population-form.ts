/**
 * The editor's population conditions: each names a column and either the values a row must have
 * (`in`), the values it must not have (`notIn`), or a numeric range. Values come ticked or typed
 * (comma-separated; planned-model-population.tsx decides which the editor offers) and are checked
 * against the locked version's columns. The engine's `selectPopulation` applies the result.
 */
import type { PopulationCondition, PopulationValue } from "~/engine/population";
import type { ColumnMeta } from "../datasets/catalog.server";
import { isNumericType } from "../datasets/categorical-hint";

/** Conditions the editor offers at most. */
export const MAX_POPULATION_CONDITIONS = 12;

export type PopulationKind = "in" | "notIn" | "range";

/** One condition as posted: `population:<i>:column`, `:kind`, `:value` (repeated), `:text`, `:min`, `:max`. */
export interface PopulationConditionForm {
  column: string;
  kind: PopulationKind;
  values: string[];
  min: string;
  max: string;
}

const str = (f: FormData, k: string): string => String(f.get(k) ?? "").trim();

export function readPopulationForm(f: FormData): PopulationConditionForm[] {
  const out: PopulationConditionForm[] = [];
  // The single "population flag = value" fields of the editor before conditions, still posted by
  // scripts written for it: read as the first condition.
  const legacyColumn = str(f, "populationColumn");
  if (legacyColumn)
    out.push({
      column: legacyColumn,
      kind: "in",
      values: [str(f, "populationValue")].filter(Boolean),
      min: "",
      max: "",
    });
  for (let i = 0; i < MAX_POPULATION_CONDITIONS; i++) {
    if (!f.has(`population:${i}:column`)) continue;
    const column = str(f, `population:${i}:column`);
    const kind = str(f, `population:${i}:kind`);
    const picked = f
      .getAll(`population:${i}:value`)
      .map((v) => String(v).trim())
      .filter(Boolean);
    const typed = str(f, `population:${i}:text`)
      .split(",")
      .map((v) => v.trim())
      .filter(Boolean);
    out.push({
      column,
      kind: kind === "notIn" || kind === "range" ? kind : "in",
      values: [...new Set([...picked, ...typed])],
      min: str(f, `population:${i}:min`),
      max: str(f, `population:${i}:max`),
    });
  }
  return out;
}

/** The editor's rows for stored conditions (the inverse of readPopulationForm). */
export function populationFormOf(
  conditions: readonly PopulationCondition[] | undefined,
): PopulationConditionForm[] {
  return (conditions ?? []).map((c) =>
    "in" in c
      ? { column: c.column, kind: "in", values: c.in.map(String), min: "", max: "" }
      : "notIn" in c
        ? { column: c.column, kind: "notIn", values: c.notIn.map(String), min: "", max: "" }
        : {
            column: c.column,
            kind: "range",
            values: [],
            min: c.min === undefined ? "" : String(c.min),
            max: c.max === undefined ? "" : String(c.max),
          },
  );
}

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/**
 * Checks the conditions against the dataset's columns and builds them; errors are keyed
 * `population:<i>:column`, `population:<i>:values` or `population:<i>:range` (i as posted).
 */
export function validatePopulation(
  rows: PopulationConditionForm[],
  dataset: { name: string; columns: ColumnMeta[] },
  errors: Record<string, string>,
): PopulationCondition[] {
  const col = new Map(dataset.columns.map((c) => [c.name, c]));
  const out: PopulationCondition[] = [];
  rows.forEach((row, i) => {
    if (!row.column) return; // a condition left without a column is no condition
    const c = col.get(row.column);
    if (!c) {
      errors[`population:${i}:column`] = `Column "${row.column}" is not in ${dataset.name}.`;
      return;
    }
    const numeric = isNumericType(c.type);
    if (row.kind === "range") {
      const min = row.min === "" ? undefined : NUMBER.test(row.min) ? Number(row.min) : Number.NaN;
      const max = row.max === "" ? undefined : NUMBER.test(row.max) ? Number(row.max) : Number.NaN;
      if (!numeric)
        errors[`population:${i}:range`] =
          `${c.name} is ${c.type}, not numeric: a range needs a numeric column; choose values instead.`;
      else if (min === undefined && max === undefined)
        errors[`population:${i}:range`] = `Give the lowest value, the highest value or both for ${c.name}.`;
      else if (Number.isNaN(min) || Number.isNaN(max))
        errors[`population:${i}:range`] = `Give the limits of ${c.name} as numbers, e.g. 18 and 64.`;
      else if (min !== undefined && max !== undefined && min > max)
        errors[`population:${i}:range`] = `The lowest value (${min}) is above the highest (${max}).`;
      else
        out.push({
          column: c.name,
          ...(min !== undefined ? { min } : {}),
          ...(max !== undefined ? { max } : {}),
        });
      return;
    }
    if (row.values.length === 0) {
      errors[`population:${i}:values`] =
        `Choose or type the values of ${c.name} that ${row.kind === "in" ? "define" : "leave out of"} the population.`;
      return;
    }
    const known = c.levels?.map((l) => l.value);
    const unknown = known
      ? row.values.filter(
          (v) => !known.includes(v) && !(numeric && known.some((k) => Number(k) === Number(v))),
        )
      : [];
    const notNumbers = numeric ? row.values.filter((v) => !NUMBER.test(v)) : [];
    if (notNumbers.length > 0)
      errors[`population:${i}:values`] =
        `${c.name} is numeric; ${notNumbers.map((v) => `"${v}"`).join(", ")} ${notNumbers.length === 1 ? "is" : "are"} not a number.`;
    else if (unknown.length > 0 && known)
      errors[`population:${i}:values`] =
        `${c.name} has no value ${unknown.map((v) => `"${v}"`).join(", ")}; its values are ${known.slice(0, 20).join(", ")}${known.length > 20 ? ", …" : ""}.`;
    else {
      const values: PopulationValue[] = row.values.map((v) => (numeric ? Number(v) : v));
      out.push(row.kind === "in" ? { column: c.name, in: values } : { column: c.name, notIn: values });
    }
  });
  return out;
}
