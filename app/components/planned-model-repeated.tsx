/**
 * The repeated-measures (MMRM) fields of the planned-model editor: the subject and visit columns,
 * the visits' order, the covariance structure of the visits and its ordered fallbacks, the degrees
 * of freedom, REML or ML, and the primary visit; and the usual terms of such a model (visit,
 * treatment × visit, baseline × visit) one press away, none forced. Field names are what
 * readRepeatedForm (app/.server/plans/repeated-planned-model.ts) reads.
 */
import { useState } from "react";
import type { EditorColumn } from "./planned-model-editor";
import { FieldError } from "./page";
import { interactionName } from "~/engine/coefficient-names";
import {
  COVARIANCE_STRUCTURES,
  COVARIANCE_STRUCTURE_WORDS,
  REPEATED_DF_WORDS,
  REPEATED_METHOD_WORDS,
  sentenceCase,
} from "~/engine/repeated/repeated-names";

export interface RepeatedFields {
  subject: string;
  visit: string;
  visitOrder: string;
  covariance: string;
  fallback: string[];
  df: string;
  method: string;
  primaryVisit: string;
}

const EMPTY: RepeatedFields = {
  subject: "",
  visit: "",
  visitOrder: "",
  covariance: "unstructured",
  fallback: [],
  df: "satterthwaite",
  method: "reml",
  primaryVisit: "",
};

const ORDINALS = ["First", "Second", "Third", "Fourth", "Fifth", "Sixth"];

/** What the section needs to know of the shared fields, and how it adds a term to them. */
export interface RepeatedTerms {
  treatment: string;
  /** Covariates ticked in the model, with whether each enters as categorical. */
  covariates: { variable: string; categorical: boolean }[];
  hasInteraction: (a: string, b: string) => boolean;
  /** Ticks a column as a categorical covariate. */
  addCategorical: (variable: string) => void;
  addInteraction: (a: string, b: string) => void;
}

function columnLabel(c: EditorColumn): string {
  return c.label ? `${c.name} · ${c.label}` : c.name;
}

export function RepeatedSection({
  initial = EMPTY,
  columns,
  response,
  terms,
  errors,
}: {
  initial?: RepeatedFields;
  columns: EditorColumn[];
  response: string;
  terms: RepeatedTerms;
  errors: Record<string, string>;
}) {
  const [visit, setVisit] = useState(initial.visit);
  const [covariance, setCovariance] = useState(initial.covariance || "unstructured");
  const [fallback, setFallback] = useState<string[]>(initial.fallback);
  const visitColumn = columns.find((c) => c.name === visit);
  const visitChoices = columns.filter((c) => c.name !== response && (c.levels?.length ?? 0) >= 2);
  const subjectChoices = columns.filter((c) => c.name !== response && c.name !== terms.treatment);
  const orderChoices = columns.filter((c) => c.type === "number" && c.name !== response);
  const otherStructures = COVARIANCE_STRUCTURES.filter((s) => s !== covariance);
  // one more empty list place than chosen, up to every other structure
  const fallbackPlaces = Math.min(fallback.filter(Boolean).length + 1, otherStructures.length);

  const inModel = terms.covariates.find((c) => c.variable === visit);
  const continuous = terms.covariates.filter((c) => !c.categorical && c.variable !== visit);
  const described = (id: string, field: string) =>
    errors[field] ? { "aria-invalid": true as const, "aria-describedby": `${id}-error` } : {};

  return (
    <fieldset className="panel p-4">
      <legend className="px-1 text-sm font-semibold">Repeated measures</legend>
      <p className="mb-3 text-xs text-ink-soft">
        One record per subject and visit (a long dataset); the endpoint is usually the change from baseline at
        each post-baseline visit. The records of a subject are correlated through the covariance of the
        visits, fitted by restricted maximum likelihood unless the SAP says otherwise.
      </p>
      <div className="grid gap-3 md:grid-cols-3">
        <div>
          <label htmlFor="pm-subject" className="label">
            Subject identifier
          </label>
          <select
            id="pm-subject"
            name="subject"
            className="field"
            defaultValue={initial.subject}
            {...described("pm-subject", "subject")}
          >
            <option value="">Choose a column</option>
            {subjectChoices.map((c) => (
              <option key={c.name} value={c.name}>
                {columnLabel(c)}
              </option>
            ))}
          </select>
          <FieldError id="pm-subject-error" message={errors.subject} />
        </div>
        <div>
          <label htmlFor="pm-visit" className="label">
            Visit
          </label>
          <select
            id="pm-visit"
            name="visit"
            className="field"
            value={visit}
            onChange={(e) => setVisit(e.target.value)}
            {...described("pm-visit", "visit")}
          >
            <option value="">Choose a column</option>
            {visitChoices.map((c) => (
              <option key={c.name} value={c.name}>
                {columnLabel(c)} ({c.levels?.length} values)
              </option>
            ))}
          </select>
          <FieldError id="pm-visit-error" message={errors.visit} />
        </div>
        <div>
          <label htmlFor="pm-visit-order" className="label">
            Visit order (optional)
          </label>
          <select
            id="pm-visit-order"
            name="visitOrder"
            className="field"
            defaultValue={initial.visitOrder}
            {...(errors.visitOrder
              ? described("pm-visit-order", "visitOrder")
              : { "aria-describedby": "pm-visit-order-hint" })}
          >
            <option value="">None: the visits' own order</option>
            {orderChoices.map((c) => (
              <option key={c.name} value={c.name}>
                {columnLabel(c)}
              </option>
            ))}
          </select>
          {errors.visitOrder ? null : (
            <p id="pm-visit-order-hint" className="mt-1 text-xs text-ink-soft">
              A numeric column with one value per visit (e.g. AVISITN), so Week 12 follows Week 8.
            </p>
          )}
          <FieldError id="pm-visit-order-error" message={errors.visitOrder} />
        </div>
      </div>

      <div className="mt-3 grid gap-3 md:grid-cols-3">
        <div>
          <label htmlFor="pm-covariance" className="label">
            Covariance of the visits
          </label>
          <select
            id="pm-covariance"
            name="covariance"
            className="field"
            value={covariance}
            onChange={(e) => {
              setCovariance(e.target.value);
              setFallback((list) => list.filter((s) => s !== e.target.value));
            }}
            {...described("pm-covariance", "covariance")}
          >
            {COVARIANCE_STRUCTURES.map((s) => (
              <option key={s} value={s}>
                {sentenceCase(COVARIANCE_STRUCTURE_WORDS[s])}
                {s === "unstructured" ? " (usual)" : ""}
              </option>
            ))}
          </select>
          <FieldError id="pm-covariance-error" message={errors.covariance} />
        </div>
        <fieldset
          className="md:col-span-2"
          aria-describedby={errors.fallback ? "pm-fallback-error" : "pm-fallback-hint"}
        >
          <legend className="label">If it does not converge, try in order</legend>
          <div className="flex flex-wrap gap-2">
            {Array.from({ length: fallbackPlaces }, (_, i) => (
              <select
                key={i}
                aria-label={`${ORDINALS[i]} fallback structure`}
                name="fallback"
                className="field w-auto"
                value={fallback[i] ?? ""}
                onChange={(e) =>
                  setFallback((list) => {
                    const next = [...list];
                    next[i] = e.target.value;
                    // an emptied place closes the list after it
                    return e.target.value ? next : next.slice(0, i);
                  })
                }
              >
                <option value="">{i === 0 ? "No fallback" : "No further fallback"}</option>
                {otherStructures.map((s) => (
                  <option key={s} value={s}>
                    {sentenceCase(COVARIANCE_STRUCTURE_WORDS[s])}
                  </option>
                ))}
              </select>
            ))}
          </div>
          {errors.fallback ? null : (
            <p id="pm-fallback-hint" className="mt-1 text-xs text-ink-soft">
              The SAP&apos;s ordered list; the rerun reports the structure it used.
            </p>
          )}
          <FieldError id="pm-fallback-error" message={errors.fallback} />
        </fieldset>
      </div>

      <div className="mt-3 grid gap-3 md:grid-cols-3">
        <div>
          <label htmlFor="pm-df" className="label">
            Degrees of freedom
          </label>
          <select
            id="pm-df"
            name="df"
            className="field"
            defaultValue={initial.df || "satterthwaite"}
            {...described("pm-df", "df")}
          >
            {Object.entries(REPEATED_DF_WORDS).map(([value, words]) => (
              <option key={value} value={value}>
                {sentenceCase(words)}
                {value === "satterthwaite" ? " (default)" : ""}
              </option>
            ))}
          </select>
          <FieldError id="pm-df-error" message={errors.df} />
        </div>
        <fieldset aria-describedby={errors.method ? "pm-method-error" : undefined}>
          <legend className="label">Estimation</legend>
          <div className="space-y-1">
            {Object.entries(REPEATED_METHOD_WORDS).map(([value, words]) => (
              <label key={value} className="flex items-center gap-2 text-sm">
                <input
                  type="radio"
                  name="method"
                  value={value}
                  defaultChecked={(initial.method || "reml") === value}
                />
                {sentenceCase(words)}
                {value === "reml" ? " (default)" : ""}
              </label>
            ))}
          </div>
          <FieldError id="pm-method-error" message={errors.method} />
        </fieldset>
        <div>
          <label htmlFor="pm-primary-visit" className="label">
            Primary visit
          </label>
          <select
            id="pm-primary-visit"
            key={visit}
            name="primaryVisit"
            className="field"
            defaultValue={visit === initial.visit ? initial.primaryVisit : ""}
            {...described("pm-primary-visit", "primaryVisit")}
          >
            <option value="">The last visit by order</option>
            {[...(visitColumn?.levels ?? [])]
              .sort((a, b) => a.value.localeCompare(b.value, "en", { numeric: true }))
              .map((l) => (
                <option key={l.value} value={l.value}>
                  {l.value} (n = {l.count})
                </option>
              ))}
          </select>
          <FieldError id="pm-primary-visit-error" message={errors.primaryVisit} />
        </div>
      </div>

      <div className="mt-4">
        <p className="label">Usual terms of the model</p>
        {!visit ? (
          <p className="text-xs text-ink-soft">Choose the visit column first.</p>
        ) : (
          <>
            <p className="mb-2 text-xs text-ink-soft">
              A mean per visit, the treatment effect at each visit and the baseline&apos;s effect at each
              visit are usual; add those the SAP names. They appear among the covariates and interactions
              below.
            </p>
            <div className="flex flex-wrap gap-2">
              <TermButton
                words={`${visit} (categorical)`}
                present={inModel?.categorical === true}
                onAdd={() => terms.addCategorical(visit)}
              />
              {terms.treatment ? (
                <TermButton
                  words={interactionName([terms.treatment, visit])}
                  present={terms.hasInteraction(terms.treatment, visit)}
                  needs={inModel ? undefined : `add ${visit} first`}
                  onAdd={() => terms.addInteraction(terms.treatment, visit)}
                />
              ) : null}
              {continuous.map((c) => (
                <TermButton
                  key={c.variable}
                  words={interactionName([c.variable, visit])}
                  present={terms.hasInteraction(c.variable, visit)}
                  needs={inModel ? undefined : `add ${visit} first`}
                  onAdd={() => terms.addInteraction(c.variable, visit)}
                />
              ))}
            </div>
            {continuous.length === 0 ? (
              <p className="mt-2 text-xs text-ink-soft">
                Tick the baseline value among the covariates to offer baseline × visit.
              </p>
            ) : null}
          </>
        )}
      </div>
    </fieldset>
  );
}

function TermButton({
  words,
  present,
  needs,
  onAdd,
}: {
  words: string;
  present: boolean;
  needs?: string;
  onAdd: () => void;
}) {
  return (
    <button
      type="button"
      className="btn-quiet text-xs"
      disabled={present || needs !== undefined}
      onClick={onAdd}
    >
      {present ? `✓ ${words} in the model` : `Add ${words}`}
      {needs && !present ? <span className="text-ink-soft"> ({needs})</span> : null}
    </button>
  );
}
