/**
 * The time-to-event fields of the planned-model editor: the status column and the values that
 * mean the event happened, strata, ties, and the time scale of the proportional-hazards test.
 * Field names are what readSurvivalForm (app/.server/plans/cox-planned-model.ts) reads.
 */
import { useState } from "react";
import type { EditorColumn } from "./planned-model-editor";
import { FieldError } from "./page";

export interface SurvivalFields {
  statusColumn: string;
  eventValues: string[];
  strata: string[];
  ties: string;
  transform: string;
}

const EMPTY: SurvivalFields = {
  statusColumn: "",
  eventValues: [],
  strata: [],
  ties: "efron",
  transform: "km",
};

export function SurvivalSection({
  initial = EMPTY,
  columns,
  exclude,
  errors,
}: {
  initial?: SurvivalFields;
  columns: EditorColumn[];
  exclude: string[];
  errors: Record<string, string>;
}) {
  const [status, setStatus] = useState(initial.statusColumn);
  const [events, setEvents] = useState(() => new Set(initial.eventValues));
  const coded = columns.filter((c) => c.levels && c.levels.length >= 2 && c.levels.length <= 12);
  const statusLevels = columns.find((c) => c.name === status)?.levels ?? [];
  const strataChoices = coded.filter((c) => c.name !== status && !exclude.includes(c.name));
  return (
    <fieldset className="panel p-4">
      <legend className="px-1 text-sm font-semibold">Time to event</legend>
      <p className="mb-3 text-xs text-ink-soft">
        Which rows had the event, how tied event times are handled, and the strata (separate baseline hazards,
        usually the randomization factors). ADaM time-to-event data code censoring as CNSR = 1, so the event
        is 0.
      </p>
      <div className="grid gap-3 md:grid-cols-3">
        <div>
          <label htmlFor="pm-status" className="label">
            Status column
          </label>
          <select
            id="pm-status"
            name="statusColumn"
            className="field"
            value={status}
            onChange={(e) => {
              setStatus(e.target.value);
              setEvents(new Set());
            }}
            aria-invalid={errors.statusColumn ? true : undefined}
            aria-describedby={errors.statusColumn ? "pm-status-error" : undefined}
          >
            <option value="">Choose a column</option>
            {coded.map((c) => (
              <option key={c.name} value={c.name}>
                {c.label ? `${c.name} · ${c.label}` : c.name}
              </option>
            ))}
          </select>
          <FieldError id="pm-status-error" message={errors.statusColumn} />
        </div>
        <fieldset aria-describedby={errors.eventValue ? "pm-event-error" : undefined}>
          <legend className="label">Values meaning the event happened</legend>
          {statusLevels.length === 0 ? (
            <p className="text-xs text-ink-soft">Choose the status column first.</p>
          ) : null}
          <div className="flex flex-wrap gap-x-4">
            {statusLevels.map((l) => (
              <label key={l.value} className="inline-flex items-center gap-1.5 text-sm">
                <input
                  type="checkbox"
                  name="eventValue"
                  value={l.value}
                  checked={events.has(l.value)}
                  onChange={(e) => {
                    const next = new Set(events);
                    if (e.target.checked) next.add(l.value);
                    else next.delete(l.value);
                    setEvents(next);
                  }}
                />
                <span className="num">{l.value}</span>{" "}
                <span className="text-xs text-ink-soft">(n = {l.count})</span>
              </label>
            ))}
          </div>
          <FieldError id="pm-event-error" message={errors.eventValue} />
        </fieldset>
        <div className="grid gap-3">
          <div>
            <label htmlFor="pm-ties" className="label">
              Tied event times
            </label>
            <select
              id="pm-ties"
              name="ties"
              className="field"
              defaultValue={initial.ties}
              aria-invalid={errors.ties ? true : undefined}
            >
              <option value="efron">Efron (default)</option>
              <option value="breslow">Breslow</option>
            </select>
            <FieldError id="pm-ties-error" message={errors.ties} />
          </div>
          <div>
            <label htmlFor="pm-ph" className="label">
              Time scale of the proportional-hazards test
            </label>
            <select
              id="pm-ph"
              name="phTransform"
              className="field"
              defaultValue={initial.transform}
              aria-invalid={errors.phTransform ? true : undefined}
            >
              <option value="km">Kaplan–Meier (default)</option>
              <option value="rank">Rank of time</option>
              <option value="identity">Time</option>
              <option value="log">Log time</option>
            </select>
            <FieldError id="pm-ph-error" message={errors.phTransform} />
          </div>
        </div>
      </div>
      <fieldset className="mt-3" aria-describedby={errors.stratum ? "pm-stratum-error" : undefined}>
        <legend className="label">Strata</legend>
        <div className="flex flex-wrap gap-x-5 gap-y-1">
          {strataChoices.map((c) => (
            <label key={c.name} className="inline-flex items-center gap-1.5 text-sm">
              <input
                type="checkbox"
                name="stratum"
                value={c.name}
                defaultChecked={initial.strata.includes(c.name)}
              />
              {c.name}
              {c.label ? <span className="text-xs text-ink-soft">{c.label}</span> : null}
            </label>
          ))}
        </div>
        <FieldError id="pm-stratum-error" message={errors.stratum} />
      </fieldset>
    </fieldset>
  );
}
