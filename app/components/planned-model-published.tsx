/**
 * The published values of the planned-model editor: per row, which quantity the clinical study
 * report printed (a treatment contrast, an adjusted mean or a coefficient), which of its numbers
 * (estimate, SE, a CI bound, p) and the value exactly as printed, so its decimals are known.
 * Field names `published:<row>:<field>` are what readPublishedForm
 * (app/.server/plans/published-planned-values.ts) reads.
 */
import { useRef, useState } from "react";
import { FieldError } from "./page";

export interface PublishedFields {
  quantity: string;
  level: string;
  reference: string;
  measure: string;
  variable: string;
  statistic: string;
  value: string;
}

const QUANTITIES = [
  { value: "contrast", label: "Treatment contrast" },
  { value: "mean", label: "Adjusted mean" },
  { value: "coefficient", label: "Coefficient" },
];

const STATISTICS = [
  { value: "estimate", label: "Estimate" },
  { value: "se", label: "SE" },
  { value: "lower", label: "Lower 95% CI bound" },
  { value: "upper", label: "Upper 95% CI bound" },
  { value: "p", label: "p-value" },
];

const MEASURES: Record<string, string[]> = {
  binomial: ["risk difference", "risk ratio", "odds ratio"],
  poisson: ["rate ratio"],
};

const EMPTY: PublishedFields = {
  quantity: "contrast",
  level: "",
  reference: "",
  measure: "",
  variable: "",
  statistic: "estimate",
  value: "",
};

export interface PublishedTerm {
  variable: string;
  categorical: boolean;
  levels: string[];
}

function Choice({
  id,
  name,
  label,
  value,
  onChange,
  options,
  placeholder,
  error,
}: {
  id: string;
  name: string;
  label: string;
  value: string;
  onChange: (v: string) => void;
  options: { value: string; label: string }[];
  placeholder?: string;
  error?: string;
}) {
  return (
    <div>
      <label htmlFor={id} className="label">
        {label}
      </label>
      <select
        id={id}
        name={name}
        className="field"
        value={value}
        onChange={(e) => onChange(e.target.value)}
        aria-invalid={error ? true : undefined}
        aria-describedby={error ? `${id}-error` : undefined}
      >
        {placeholder !== undefined ? <option value="">{placeholder}</option> : null}
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
      <FieldError id={`${id}-error`} message={error} />
    </div>
  );
}

export function PublishedValuesSection({
  initial,
  family,
  arms,
  reference,
  terms,
  errors,
}: {
  initial: readonly PublishedFields[];
  family: string;
  arms: string[];
  reference: string;
  terms: PublishedTerm[];
  errors: Record<string, string>;
}) {
  const nextId = useRef(initial.length);
  const [rows, setRows] = useState(() => initial.map((r, id) => ({ id, ...r })));
  const set = (id: number, patch: Partial<PublishedFields>) =>
    setRows((all) => all.map((r) => (r.id === id ? { ...r, ...patch } : r)));
  const measures = MEASURES[family];
  const armOptions = arms.map((a) => ({ value: a, label: a }));
  return (
    <fieldset className="panel p-4">
      <legend className="px-1 text-sm font-semibold">Published values to reproduce</legend>
      <p className="mb-3 text-xs text-ink-soft">
        Values the clinical study report printed for this model. Each rerun rounds its own value to the
        decimals printed (half away from zero) and states whether it reproduces the published one; a value not
        reproduced is a finding to assess. Changing these values changes the plan.
      </p>
      {rows.length === 0 ? (
        <p className="mb-3 text-sm text-ink-soft">
          No published values: the rerun makes no reproduction check.
        </p>
      ) : null}
      <ol className="space-y-3">
        {rows.map((r, i) => {
          const id = `pub-${r.id}`;
          const e = (field: string) => errors[`published:${i}:${field}`];
          const term = terms.find((t) => t.variable === r.variable);
          return (
            <li key={r.id}>
              <fieldset className="rounded-sm border border-rule p-3">
                <legend className="px-1 text-xs font-semibold">Published value {i + 1}</legend>
                <div className="grid gap-3 sm:grid-cols-2 lg:grid-cols-3">
                  <Choice
                    id={`${id}-quantity`}
                    name={`published:${i}:quantity`}
                    label="Quantity"
                    value={r.quantity}
                    onChange={(v) =>
                      set(r.id, {
                        quantity: v,
                        level: "",
                        variable: "",
                        statistic: v === "mean" && r.statistic === "p" ? "estimate" : r.statistic,
                      })
                    }
                    options={QUANTITIES}
                    error={e("quantity")}
                  />
                  {r.quantity === "coefficient" ? (
                    <>
                      <Choice
                        id={`${id}-variable`}
                        name={`published:${i}:variable`}
                        label="Term"
                        value={r.variable}
                        onChange={(v) => set(r.id, { variable: v, level: "" })}
                        options={terms.map((t) => ({ value: t.variable, label: t.variable }))}
                        placeholder="Choose a term"
                        error={e("variable")}
                      />
                      {term?.categorical ? (
                        <Choice
                          id={`${id}-level`}
                          name={`published:${i}:level`}
                          label="Level"
                          value={r.level}
                          onChange={(v) => set(r.id, { level: v })}
                          options={term.levels.map((l) => ({ value: l, label: l }))}
                          placeholder="Choose a level"
                          error={e("level")}
                        />
                      ) : (
                        <input type="hidden" name={`published:${i}:level`} value="" />
                      )}
                    </>
                  ) : (
                    <Choice
                      id={`${id}-level`}
                      name={`published:${i}:level`}
                      label={r.quantity === "contrast" ? "Arm" : "Arm of the mean"}
                      value={r.level}
                      onChange={(v) => set(r.id, { level: v })}
                      options={armOptions}
                      placeholder={arms.length ? "Choose an arm" : "Choose the treatment first"}
                      error={e("level")}
                    />
                  )}
                  {r.quantity === "contrast" ? (
                    <Choice
                      id={`${id}-reference`}
                      name={`published:${i}:reference`}
                      label="Compared with"
                      value={r.reference}
                      onChange={(v) => set(r.id, { reference: v })}
                      options={armOptions.filter((a) => a.value !== reference)}
                      placeholder={reference ? `${reference} (reference arm)` : "The reference arm"}
                      error={e("reference")}
                    />
                  ) : null}
                  {r.quantity === "contrast" && measures ? (
                    <Choice
                      id={`${id}-measure`}
                      name={`published:${i}:measure`}
                      label="Measure"
                      value={r.measure}
                      onChange={(v) => set(r.id, { measure: v })}
                      options={measures.map((m) => ({ value: m, label: m }))}
                      placeholder="Choose the measure"
                      error={e("measure")}
                    />
                  ) : null}
                  <Choice
                    id={`${id}-statistic`}
                    name={`published:${i}:statistic`}
                    label="Number printed"
                    value={r.statistic}
                    onChange={(v) => set(r.id, { statistic: v })}
                    options={r.quantity === "mean" ? STATISTICS.filter((s) => s.value !== "p") : STATISTICS}
                    error={e("statistic")}
                  />
                  <div>
                    <label htmlFor={`${id}-value`} className="label">
                      Value as printed
                    </label>
                    <input
                      id={`${id}-value`}
                      name={`published:${i}:value`}
                      className="field num"
                      inputMode="decimal"
                      autoComplete="off"
                      value={r.value}
                      onChange={(ev) => set(r.id, { value: ev.target.value })}
                      aria-invalid={e("value") ? true : undefined}
                      aria-describedby={e("value") ? `${id}-value-error` : `${id}-value-hint`}
                    />
                    {e("value") ? null : (
                      <p id={`${id}-value-hint`} className="mt-1 text-xs text-ink-soft">
                        Keep every decimal printed: -2.35, 0.041; a p as &lt;0.001.
                      </p>
                    )}
                    <FieldError id={`${id}-value-error`} message={e("value")} />
                  </div>
                </div>
                <button
                  type="button"
                  className="btn-quiet mt-2 text-xs"
                  onClick={() => setRows((all) => all.filter((x) => x.id !== r.id))}
                >
                  Remove published value {i + 1}
                </button>
              </fieldset>
            </li>
          );
        })}
      </ol>
      <button
        type="button"
        className="btn-quiet mt-3"
        onClick={() => setRows((all) => [...all, { id: nextId.current++, ...EMPTY }])}
      >
        Add a published value
      </button>
    </fieldset>
  );
}
