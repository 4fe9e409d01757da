/**
 * The time-to-event part of a planned model: follow-up time, the status column and the values
 * in it that mean the event happened, strata, ties, the proportional-hazards time transform,
 * covariates and treatment, validated against the locked dataset's columns. Errors are keyed by
 * the editor's field names and say what to do.
 */
import { coxSpecSchema, type CoxSpec } from "~/engine/survival/cox-spec";
import type { Term } from "~/engine/model-spec";
import type { ColumnMeta } from "../datasets/catalog.server";

export const TIES = ["efron", "breslow"] as const;
export const TIME_TRANSFORMS = ["km", "rank", "identity", "log"] as const;

/** The editor's time-to-event fields, as posted. */
export interface SurvivalForm {
  statusColumn: string;
  /** Values of the status column that mean the event happened (ADaM: CNSR = 0). */
  eventValues: string[];
  strata: string[];
  ties: string;
  transform: string;
}

const str = (f: FormData, k: string): string => String(f.get(k) ?? "").trim();

export function readSurvivalForm(f: FormData): SurvivalForm {
  return {
    statusColumn: str(f, "statusColumn"),
    eventValues: f
      .getAll("eventValue")
      .map((v) => String(v).trim())
      .filter(Boolean),
    strata: f
      .getAll("stratum")
      .map((v) => String(v).trim())
      .filter(Boolean),
    ties: str(f, "ties") || "efron",
    transform: str(f, "phTransform") || "km",
  };
}

export const EMPTY_SURVIVAL_FORM: SurvivalForm = {
  statusColumn: "",
  eventValues: [],
  strata: [],
  ties: "efron",
  transform: "km",
};

/**
 * Checks the time-to-event fields and builds the Cox specification from them and the terms
 * the shared part of the form already validated. Adds to `errors`; returns null when any.
 */
export function validateSurvival(
  form: {
    response: string;
    treatment: string;
    weights: string;
    offset: string;
    id: string;
    survival?: SurvivalForm;
  },
  terms: Term[],
  dataset: { name: string; columns: ColumnMeta[] },
  errors: Record<string, string>,
): CoxSpec | null {
  const s = form.survival ?? EMPTY_SURVIVAL_FORM;
  const col = new Map(dataset.columns.map((c) => [c.name, c]));
  const time = col.get(form.response);
  if (time && time.type !== "number")
    errors.response = `${time.name} is ${time.type}, not numeric: a time-to-event model needs the follow-up time as a number.`;
  else if (time && time.min !== undefined && time.min < 0)
    errors.response = `${time.name} has a negative value (${time.min}); follow-up times must be zero or more.`;

  const status = s.statusColumn ? col.get(s.statusColumn) : undefined;
  if (!s.statusColumn)
    errors.statusColumn = "Choose the column that says whether the event happened (e.g. CNSR).";
  else if (!status) errors.statusColumn = `Column "${s.statusColumn}" is not in ${dataset.name}.`;
  else if (status.name === form.response)
    errors.statusColumn = "The status column cannot also be the time column.";
  else if (!status.levels || status.levels.length < 2)
    errors.statusColumn = `${status.name} must hold a few coded values (event or censored); it ${status.levels ? "has only one value" : "has too many distinct values"}.`;
  if (status && status.levels && !errors.statusColumn) {
    const values = status.levels.map((l) => l.value);
    const unknown = s.eventValues.filter((v) => !values.includes(v));
    if (s.eventValues.length === 0)
      errors.eventValue = `Tick the values of ${status.name} that mean the event happened (ADaM codes censoring as CNSR = 1, so the event is 0).`;
    else if (unknown.length)
      errors.eventValue = `${status.name} has no value ${unknown.map((v) => `"${v}"`).join(", ")}; its values are ${values.join(", ")}.`;
    else if (s.eventValues.length === values.length)
      errors.eventValue = `Every value of ${status.name} is ticked as an event: leave the censoring value(s) unticked.`;
  }

  const used = new Set([
    form.response,
    s.statusColumn,
    ...terms.flatMap((t) => ("variable" in t ? [t.variable] : [])),
  ]);
  for (const name of s.strata) {
    const c = col.get(name);
    if (!c) errors.stratum = `Column "${name}" is not in ${dataset.name}.`;
    else if (used.has(name))
      errors.stratum = `${name} is already in the model; a stratum column cannot also be a covariate, the treatment, the time or the status.`;
    else if (!c.levels || c.levels.length < 2)
      errors.stratum = `${c.name} must have a few distinct values to define strata.`;
  }
  if (!(TIES as readonly string[]).includes(s.ties))
    errors.ties = `Choose Efron or Breslow for tied event times.`;
  if (!(TIME_TRANSFORMS as readonly string[]).includes(s.transform))
    errors.phTransform = "Choose the time scale of the proportional-hazards test: km, rank, identity or log.";
  if (terms.length === 0)
    errors.treatment = errors.treatment ?? "A Cox model needs at least the treatment or one covariate.";
  if (Object.keys(errors).length > 0) return null;

  const eventValues = s.eventValues.map((v) =>
    status?.type === "number" && Number.isFinite(Number(v)) ? Number(v) : v,
  );
  return coxSpecSchema.parse({
    family: "cox",
    response: form.response,
    status: { column: s.statusColumn, event: eventValues },
    terms,
    ...(form.treatment ? { treatment: form.treatment } : {}),
    strata: s.strata,
    ties: s.ties,
    ...(form.weights ? { weights: form.weights } : {}),
    ...(form.offset ? { offset: form.offset } : {}),
    ...(form.id ? { id: form.id } : {}),
    proportionalHazards: { transform: s.transform },
  });
}

/** The editor's time-to-event fields of a stored Cox specification. */
export function survivalFormOf(spec: CoxSpec): SurvivalForm {
  return {
    statusColumn: spec.status.column,
    eventValues: spec.status.event.map(String),
    strata: [...spec.strata],
    ties: spec.ties,
    transform: spec.proportionalHazards.transform,
  };
}
