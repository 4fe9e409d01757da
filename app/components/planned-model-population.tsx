/**
 * The editor's population: conditions that every analysed row meets. Each names any column of
 * the dataset and either the values a row must have, the values it must not have, or a numeric
 * range. Values are ticked from the column's levels where it has few, typed otherwise. Field
 * names are what `readPopulationForm` (population-form.ts) reads on the server.
 */
import { useState } from "react";
import { FieldError } from "./page";
import type { EditorColumn } from "./planned-model-editor";

export interface PopulationConditionFields {
  column: string;
  kind: "in" | "notIn" | "range";
  values: string[];
  min: string;
  max: string;
}

/** A column with at most this many levels offers them as tick boxes; others are typed. */
const PICK_UP_TO = 20;

const KIND_WORDS: Record<PopulationConditionFields["kind"], string> = {
  in: "is one of",
  notIn: "is none of",
  range: "lies within",
};

let nextKey = 0;
const keyed = (c: PopulationConditionFields) => ({ ...c, key: nextKey++ });

export function PopulationSection({
  initial,
  columns,
  errors,
}: {
  initial: PopulationConditionFields[];
  columns: EditorColumn[];
  errors: Record<string, string>;
}) {
  const [rows, setRows] = useState(() => initial.map(keyed));
  const col = (name: string) => columns.find((c) => c.name === name);
  const update = (key: number, patch: Partial<PopulationConditionFields>) =>
    setRows(rows.map((r) => (r.key === key ? { ...r, ...patch } : r)));
  return (
    <div className="mt-3">
      <p className="label" id="pm-pop-h">
        Population
      </p>
      <p className="mb-2 text-xs text-ink-soft">
        A row is analysed when it meets every condition (for a long dataset: the analysis flag, the parameter
        and the visit). Without conditions every row is analysed.
      </p>
      {rows.length === 0 ? <p className="text-sm">All rows.</p> : null}
      <ol className="space-y-3" aria-labelledby="pm-pop-h">
        {rows.map((r, i) => {
          const c = col(r.column);
          const levels = c?.levels ?? [];
          const pick = levels.length > 0 && levels.length <= PICK_UP_TO;
          const id = `pm-pop-${i}`;
          const valuesError = errors[`population:${i}:values`];
          const rangeError = errors[`population:${i}:range`];
          return (
            <li key={r.key} className="rounded border border-rule p-3">
              <fieldset>
                <legend className="text-sm font-semibold">Condition {i + 1}</legend>
                <div className="grid gap-3 md:grid-cols-[1fr_12rem_auto]">
                  <div>
                    <label htmlFor={`${id}-column`} className="label">
                      Column
                    </label>
                    <select
                      id={`${id}-column`}
                      name={`population:${i}:column`}
                      className="field"
                      value={r.column}
                      onChange={(e) => update(r.key, { column: e.target.value, values: [] })}
                      aria-invalid={errors[`population:${i}:column`] ? true : undefined}
                      aria-describedby={`${id}-column-error`}
                    >
                      <option value="">Choose a column</option>
                      {columns.map((x) => (
                        <option key={x.name} value={x.name}>
                          {x.label ? `${x.name} · ${x.label}` : x.name}
                        </option>
                      ))}
                    </select>
                    <FieldError id={`${id}-column-error`} message={errors[`population:${i}:column`]} />
                  </div>
                  <div>
                    <label htmlFor={`${id}-kind`} className="label">
                      Condition
                    </label>
                    <select
                      id={`${id}-kind`}
                      name={`population:${i}:kind`}
                      className="field"
                      value={r.kind}
                      onChange={(e) =>
                        update(r.key, { kind: e.target.value as PopulationConditionFields["kind"] })
                      }
                    >
                      {(Object.keys(KIND_WORDS) as PopulationConditionFields["kind"][]).map((k) => (
                        <option key={k} value={k}>
                          {KIND_WORDS[k]}
                        </option>
                      ))}
                    </select>
                  </div>
                  <div className="self-end">
                    <button
                      type="button"
                      className="btn-quiet"
                      onClick={() => setRows(rows.filter((x) => x.key !== r.key))}
                    >
                      Remove condition {i + 1}
                    </button>
                  </div>
                </div>
                {r.kind === "range" ? (
                  <div className="mt-2 flex flex-wrap items-end gap-3">
                    <div>
                      <label htmlFor={`${id}-min`} className="label">
                        From (lowest value kept)
                      </label>
                      <input
                        id={`${id}-min`}
                        name={`population:${i}:min`}
                        inputMode="decimal"
                        className="field num w-32"
                        defaultValue={r.min}
                        aria-invalid={rangeError ? true : undefined}
                        aria-describedby={`${id}-range-error`}
                      />
                    </div>
                    <div>
                      <label htmlFor={`${id}-max`} className="label">
                        To (highest value kept)
                      </label>
                      <input
                        id={`${id}-max`}
                        name={`population:${i}:max`}
                        inputMode="decimal"
                        className="field num w-32"
                        defaultValue={r.max}
                        aria-invalid={rangeError ? true : undefined}
                        aria-describedby={`${id}-range-error`}
                      />
                    </div>
                    <FieldError id={`${id}-range-error`} message={rangeError} />
                  </div>
                ) : pick ? (
                  <fieldset className="mt-2" aria-describedby={`${id}-values-error`}>
                    <legend className="label">Values of {r.column}</legend>
                    <div className="flex flex-wrap gap-x-4 gap-y-1">
                      {levels.map((l) => (
                        <label key={l.value} className="inline-flex items-center gap-1.5 text-sm">
                          <input
                            type="checkbox"
                            name={`population:${i}:value`}
                            value={l.value}
                            checked={r.values.includes(l.value)}
                            onChange={(e) =>
                              update(r.key, {
                                values: e.target.checked
                                  ? [...r.values, l.value]
                                  : r.values.filter((v) => v !== l.value),
                              })
                            }
                          />
                          {l.value} <span className="num text-xs text-ink-soft">(n = {l.count})</span>
                        </label>
                      ))}
                    </div>
                    <FieldError id={`${id}-values-error`} message={valuesError} />
                  </fieldset>
                ) : (
                  <div className="mt-2">
                    <label htmlFor={`${id}-text`} className="label">
                      Values of {r.column || "the column"}, separated by commas
                    </label>
                    <input
                      id={`${id}-text`}
                      name={`population:${i}:text`}
                      className="field"
                      defaultValue={r.values.join(", ")}
                      aria-invalid={valuesError ? true : undefined}
                      aria-describedby={`${id}-values-error`}
                    />
                    <FieldError id={`${id}-values-error`} message={valuesError} />
                  </div>
                )}
              </fieldset>
            </li>
          );
        })}
      </ol>
      <button
        type="button"
        className="btn mt-2"
        onClick={() => setRows([...rows, keyed({ column: "", kind: "in", values: [], min: "", max: "" })])}
      >
        Add a population condition
      </button>
    </div>
  );
}
