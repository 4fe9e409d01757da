import { useMemo, useState } from "react";
import { FieldError } from "./page";
import { SurvivalSection, type SurvivalFields } from "./planned-model-survival";
import { RepeatedSection, type RepeatedFields } from "./planned-model-repeated";
import { PopulationSection, type PopulationConditionFields } from "./planned-model-population";
import { TreatmentEffectSection } from "./planned-model-analysis";
import { PublishedValuesSection, type PublishedFields } from "./planned-model-published";
import { interactionName } from "~/engine/coefficient-names";
import { linkWords } from "~/engine/family-names";
import { COVARIANCE_STRUCTURES, COVARIANCE_STRUCTURE_WORDS } from "~/engine/repeated/repeated-names";
import { checkApplies, sensitivityApplies, type SensitivityKind } from "~/engine/family-applicability";

export interface EditorColumn {
  name: string;
  label: string | null;
  type: "number" | "text" | "date" | "datetime";
  levels?: { value: string; count: number }[];
  /** Why a numeric column looks categorical; such a covariate needs an explicit choice. */
  looksCategorical?: string;
}

interface EditorDataset {
  name: string;
  version: number;
  rowCount: number;
  columns: EditorColumn[];
}

interface CheckInfo {
  key: Parameters<typeof checkApplies>[0]["key"];
  models: "linear" | "glm" | "both" | "cox" | "repeated";
  label: string;
  rule: string;
  source: string;
  defaultThreshold: number;
  defaultRemedy: string;
}

export interface EditorForm {
  key: string;
  title: string;
  datasetName: string;
  population: PopulationConditionFields[];
  response: string;
  family: string;
  link: string;
  treatment: string;
  treatmentReference: string;
  /** null: no explicit choice (a numeric column is then continuous unless it looks categorical). */
  covariates: { variable: string; categorical: boolean | null; reference: string }[];
  interactions: string[][];
  weights: string;
  offset: string;
  id: string;
  checks: { key: string; enabled: boolean; threshold: number; remedy: string }[];
  sensitivity: {
    kind: string;
    varianceBy?: string;
    covariates?: string[];
    label?: string;
    tau?: number;
    structure?: string;
  }[];
  /** Adjusted-means weighting, contrasts and multiplicity (linear and generalized linear models). */
  means: string;
  contrasts: string;
  multiplicity: string;
  /** Time-to-event fields (family "cox"). */
  survival?: SurvivalFields;
  /** Repeated-measures fields (family "repeated"). */
  repeated?: RepeatedFields;
  /** Values the study report printed, for the reproduction check (linear and generalized linear models). */
  published?: PublishedFields[];
}

const LINKS: Record<string, string[]> = {
  gaussian: ["identity"],
  binomial: ["logit", "probit", "cloglog"],
  poisson: ["log"],
};

function Select({
  id,
  name,
  label,
  value,
  onChange,
  options,
  error,
  hint,
  placeholder,
}: {
  id: string;
  name: string;
  label: string;
  value: string;
  onChange?: (v: string) => void;
  options: { value: string; label: string }[];
  error?: string;
  hint?: string;
  placeholder?: string;
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
        {...(onChange
          ? { value, onChange: (e: React.ChangeEvent<HTMLSelectElement>) => onChange(e.target.value) }
          : { defaultValue: value })}
        aria-invalid={error ? true : undefined}
        aria-describedby={error ? `${id}-error` : hint ? `${id}-hint` : undefined}
      >
        {placeholder !== undefined ? <option value="">{placeholder}</option> : null}
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
      {hint && !error ? (
        <p id={`${id}-hint`} className="mt-1 text-xs text-ink-soft">
          {hint}
        </p>
      ) : null}
      <FieldError id={`${id}-error`} message={error} />
    </div>
  );
}

function Section({ title, children, note }: { title: string; note?: string; children: React.ReactNode }) {
  return (
    <fieldset className="panel p-4">
      <legend className="px-1 text-sm font-semibold">{title}</legend>
      {note ? <p className="mb-3 text-xs text-ink-soft">{note}</p> : null}
      {children}
    </fieldset>
  );
}

/**
 * The planned-model form: every term is picked from the dataset's columns (no formula
 * language). Field names are what `readPlannedModelForm` reads on the server.
 */
export function PlannedModelEditor({
  initial,
  errors,
  datasets,
  checkCatalogue,
  isNew,
}: {
  initial: EditorForm;
  errors: Record<string, string>;
  datasets: EditorDataset[];
  checkCatalogue: CheckInfo[];
  isNew: boolean;
}) {
  const [datasetName, setDatasetName] = useState(initial.datasetName || datasets[0]?.name || "");
  const [family, setFamily] = useState(initial.family || "gaussian");
  const [response, setResponse] = useState(initial.response);
  const [treatment, setTreatment] = useState(initial.treatment);
  const [reference, setReference] = useState(initial.treatmentReference);
  const [covariates, setCovariates] = useState(() => new Map(initial.covariates.map((c) => [c.variable, c])));
  const [interactions, setInteractions] = useState(
    () => new Set(initial.interactions.map((i) => i.join("|"))),
  );
  const sens = new Map(initial.sensitivity.map((s) => [s.kind, s]));
  /** Only the checks and sensitivity analyses that apply to the family are offered (family-applicability.ts). */
  const offered = (kind: SensitivityKind) => sensitivityApplies(kind, family);

  const dataset = datasets.find((d) => d.name === datasetName);
  const columns = dataset?.columns ?? [];
  const col = (name: string) => columns.find((c) => c.name === name);
  const colOptions = (filter: (c: EditorColumn) => boolean = () => true) =>
    columns
      .filter(filter)
      .map((c) => ({ value: c.name, label: c.label ? `${c.name} · ${c.label}` : c.name }));
  const levels = (name: string) =>
    (col(name)?.levels ?? []).map((l) => ({ value: l.value, label: `${l.value} (n = ${l.count})` }));
  const categoricalColumns = (c: EditorColumn) =>
    Boolean(c.levels && c.levels.length >= 2 && c.levels.length <= 12);

  const candidateCovariates = columns.filter(
    (c) => c.name !== response && c.name !== treatment && c.type !== "date" && c.type !== "datetime",
  );
  const included = [...covariates.keys()].filter((v) => candidateCovariates.some((c) => c.name === v));
  const interactionChoices = useMemo(() => {
    const vars = [...(treatment ? [treatment] : []), ...included];
    const out: string[][] = [];
    for (let i = 0; i < vars.length; i++)
      for (let j = i + 1; j < vars.length; j++) out.push([vars[i], vars[j]]);
    return out;
    // eslint-disable-next-line react-hooks/exhaustive-deps -- keyed by the names included, not the array's identity
  }, [treatment, included.join("|")]);

  const toggleCovariate = (name: string, on: boolean) => {
    const next = new Map(covariates);
    if (on)
      next.set(name, {
        variable: name,
        categorical: col(name)?.type !== "number" ? true : null,
        reference: "",
      });
    else next.delete(name);
    setCovariates(next);
  };
  /**
   * The interaction of two main terms as the plan holds it, in either order: the choices list pairs
   * in the order the terms were ticked, which need not be the order a stored plan names them.
   */
  const chosenInteraction = (a: string, b: string): string | undefined =>
    [`${a}|${b}`, `${b}|${a}`].find((k) => interactions.has(k));
  /** The repeated-measures section's one-press terms: a categorical covariate, an interaction of two main terms. */
  const interactionKey = (a: string, b: string) =>
    (interactionChoices.find((p) => p.includes(a) && p.includes(b)) ?? [a, b]).join("|");
  const repeatedTerms = {
    treatment,
    covariates: included.map((v) => ({
      variable: v,
      categorical: covariates.get(v)?.categorical === true || col(v)?.type !== "number",
    })),
    hasInteraction: (a: string, b: string) => chosenInteraction(a, b) !== undefined,
    addCategorical: (name: string) => {
      const next = new Map(covariates);
      next.set(name, { variable: name, categorical: true, reference: next.get(name)?.reference ?? "" });
      setCovariates(next);
    },
    addInteraction: (a: string, b: string) =>
      setInteractions(new Set(interactions).add(interactionKey(a, b))),
  };
  const repeated = family === "repeated";
  const setCovariate = (name: string, patch: Partial<{ categorical: boolean | null; reference: string }>) => {
    const next = new Map(covariates);
    const c = next.get(name);
    if (c) next.set(name, { ...c, ...patch });
    setCovariates(next);
  };

  return (
    <div className="space-y-4">
      <Section title="Planned model">
        <div className="grid gap-3 md:grid-cols-[12rem_1fr]">
          <div>
            <label htmlFor="pm-key" className="label">
              Key
            </label>
            <input
              id="pm-key"
              name="key"
              defaultValue={initial.key}
              className="field font-mono"
              placeholder="primary"
              aria-invalid={errors.key ? true : undefined}
              aria-describedby="pm-key-error"
            />
            <FieldError id="pm-key-error" message={errors.key} />
          </div>
          <div>
            <label htmlFor="pm-title" className="label">
              Title
            </label>
            <input
              id="pm-title"
              name="title"
              defaultValue={initial.title}
              className="field"
              placeholder="Primary efficacy: change from baseline at week 12"
              aria-invalid={errors.title ? true : undefined}
              aria-describedby="pm-title-error"
            />
            <FieldError id="pm-title-error" message={errors.title} />
          </div>
        </div>
      </Section>

      <Section title="Data and population">
        <div className="grid gap-3 md:grid-cols-3">
          <Select
            id="pm-dataset"
            name="datasetName"
            label="Locked dataset"
            value={datasetName}
            onChange={setDatasetName}
            options={datasets.map((d) => ({
              value: d.name,
              label: `${d.name} (locked v${d.version}, ${d.rowCount} rows)`,
            }))}
            error={errors.datasetName}
            hint="A rerun reads any locked version of this dataset."
          />
        </div>
        <PopulationSection
          key={datasetName}
          initial={datasetName === initial.datasetName ? initial.population : []}
          columns={columns}
          errors={errors}
        />
      </Section>

      <Section title="Endpoint and model">
        <div className="grid gap-3 md:grid-cols-3">
          <Select
            id="pm-response"
            name="response"
            label={
              family === "cox"
                ? "Follow-up time (event or censoring)"
                : repeated
                  ? "Endpoint (change from baseline at each visit)"
                  : "Endpoint (response)"
            }
            value={response}
            onChange={setResponse}
            options={colOptions()}
            placeholder="Choose a column"
            error={errors.response}
          />
          <Select
            id="pm-family"
            name="family"
            label="Family"
            value={family}
            onChange={setFamily}
            error={errors.family}
            options={[
              { value: "gaussian", label: "Normal (linear model)" },
              { value: "binomial", label: "Binomial (responder)" },
              { value: "poisson", label: "Poisson (counts)" },
              { value: "cox", label: "Time to event (Cox proportional hazards)" },
              { value: "repeated", label: "Repeated measures (MMRM)" },
            ]}
          />
          {family === "cox" ? (
            <p className="self-end pb-2 text-xs text-ink-soft">
              Log hazard ratios by partial likelihood; no link to choose.
            </p>
          ) : repeated ? (
            <p className="self-end pb-2 text-xs text-ink-soft">
              Normal errors, identity link; the visits of a subject correlated as chosen below.
            </p>
          ) : (
            <Select
              id="pm-link"
              name="link"
              label="Link"
              value={LINKS[family]?.includes(initial.link) ? initial.link : ""}
              options={(LINKS[family] ?? []).map((l) => ({ value: l, label: linkWords(l) }))}
              placeholder="Canonical"
            />
          )}
        </div>
        <div className="mt-3 grid gap-3 md:grid-cols-3">
          <Select
            id="pm-treatment"
            name="treatment"
            label="Treatment variable"
            value={treatment}
            onChange={(v) => {
              setTreatment(v);
              setReference("");
            }}
            options={colOptions(categoricalColumns)}
            placeholder="No treatment term"
            error={errors.treatment}
          />
          <Select
            id="pm-reference"
            name="treatmentReference"
            label="Reference arm"
            value={reference}
            onChange={setReference}
            options={levels(treatment)}
            placeholder={treatment ? "Choose the reference arm" : "—"}
            error={errors.treatmentReference}
          />
          {repeated ? null : (
            <Select
              id="pm-id"
              name="id"
              label="Subject identifier"
              value={initial.id}
              options={colOptions()}
              placeholder="None"
              error={errors.id}
              hint="Shown beside influential subjects; a subject in two analysed rows is refused."
            />
          )}
        </div>
        {family === "cox" ? null : <TreatmentEffectSection initial={initial} errors={errors} />}
      </Section>

      {family === "cox" ? (
        <SurvivalSection
          initial={initial.survival}
          columns={columns}
          exclude={[response, treatment]}
          errors={errors}
        />
      ) : null}

      {repeated ? (
        <RepeatedSection
          initial={initial.repeated}
          columns={columns}
          response={response}
          terms={repeatedTerms}
          errors={errors}
        />
      ) : null}

      <Section
        title="Pre-specified covariates"
        note="Tick each covariate the SAP names. Numeric columns are continuous unless marked categorical; a numeric column that looks categorical (codes, flags, groups) needs your choice either way."
      >
        <table className="data-table">
          <thead>
            <tr>
              <th scope="col">In the model</th>
              <th scope="col">Column</th>
              <th scope="col">Type</th>
              <th scope="col">Categorical</th>
              <th scope="col">Reference level</th>
            </tr>
          </thead>
          <tbody>
            {candidateCovariates.map((c) => {
              const chosen = covariates.get(c.name);
              const err = errors[`covariate:${c.name}`];
              return (
                <tr key={c.name}>
                  <td>
                    <input
                      type="checkbox"
                      id={`cov-${c.name}`}
                      name="covariate"
                      value={c.name}
                      checked={Boolean(chosen)}
                      onChange={(e) => toggleCovariate(c.name, e.target.checked)}
                    />
                  </td>
                  <td>
                    <label htmlFor={`cov-${c.name}`} className="font-medium">
                      {c.name}
                    </label>
                    {c.label ? <span className="block text-xs text-ink-soft">{c.label}</span> : null}
                    <FieldError id={`cov-${c.name}-error`} message={err} />
                  </td>
                  <td className="text-xs">
                    {c.type}
                    {c.looksCategorical ? (
                      <span
                        className="block text-ink-soft"
                        title={`Looks categorical: ${c.looksCategorical}`}
                      >
                        looks categorical ({c.looksCategorical})
                      </span>
                    ) : null}
                  </td>
                  <td>
                    {chosen && c.type === "number" && c.looksCategorical ? (
                      <select
                        aria-label={`How ${c.name} enters the model`}
                        name={`as:${c.name}`}
                        className="field w-auto py-1"
                        aria-required="true"
                        value={
                          chosen.categorical === null ? "" : chosen.categorical ? "categorical" : "continuous"
                        }
                        onChange={(e) =>
                          setCovariate(c.name, {
                            categorical: e.target.value === "" ? null : e.target.value === "categorical",
                          })
                        }
                        aria-invalid={err ? true : undefined}
                        aria-describedby={err ? `cov-${c.name}-error` : undefined}
                      >
                        <option value="">Choose…</option>
                        <option value="categorical">Categorical</option>
                        <option value="continuous">Continuous</option>
                      </select>
                    ) : chosen && c.type === "number" ? (
                      <input
                        type="checkbox"
                        aria-label={`Treat ${c.name} as categorical`}
                        name={`categorical:${c.name}`}
                        checked={chosen.categorical === true}
                        onChange={(e) =>
                          setCovariate(c.name, { categorical: e.target.checked ? true : null })
                        }
                      />
                    ) : chosen ? (
                      <span className="text-xs text-ink-soft">always</span>
                    ) : null}
                  </td>
                  <td>
                    {chosen && (chosen.categorical === true || c.type !== "number") ? (
                      <select
                        aria-label={`Reference level of ${c.name}`}
                        name={`reference:${c.name}`}
                        className="field w-auto py-1"
                        value={chosen.reference}
                        onChange={(e) => setCovariate(c.name, { reference: e.target.value })}
                      >
                        <option value="">First level</option>
                        {(c.levels ?? []).map((l) => (
                          <option key={l.value} value={l.value}>
                            {l.value}
                          </option>
                        ))}
                      </select>
                    ) : null}
                  </td>
                </tr>
              );
            })}
          </tbody>
        </table>
        <div className="mt-4">
          <p className="label">Interactions</p>
          {interactionChoices.length === 0 ? (
            <p className="text-xs text-ink-soft">Choose a treatment and covariates first.</p>
          ) : (
            <div className="flex flex-wrap gap-x-5 gap-y-1">
              {interactionChoices.map((pair) => {
                const k = pair.join("|");
                const chosen = chosenInteraction(pair[0], pair[1]);
                return (
                  <label key={k} className="inline-flex items-center gap-1.5 text-sm">
                    <input
                      type="checkbox"
                      name="interaction"
                      value={chosen ?? k}
                      checked={chosen !== undefined}
                      onChange={(e) => {
                        const next = new Set(interactions);
                        if (e.target.checked) next.add(k);
                        else next.delete(chosen ?? k);
                        setInteractions(next);
                      }}
                    />
                    {interactionName(chosen?.split("|") ?? pair)}
                  </label>
                );
              })}
            </div>
          )}
          <FieldError id="pm-interactions-error" message={errors.interactions} />
        </div>
        {repeated ? (
          <div className="mt-4">
            <p className="text-xs text-ink-soft">
              A repeated-measures model takes no prior weights or offset: the covariance of the visits weighs
              the records.
            </p>
            <FieldError id="pm-weights-error" message={errors.weights ?? errors.offset} />
          </div>
        ) : (
          <div className="mt-4 grid gap-3 md:grid-cols-2">
            <Select
              id="pm-weights"
              name="weights"
              label="Prior weights"
              value={initial.weights}
              options={colOptions((c) => c.type === "number")}
              placeholder="None"
              error={errors.weights}
            />
            <Select
              id="pm-offset"
              name="offset"
              label="Offset"
              value={initial.offset}
              options={colOptions((c) => c.type === "number")}
              placeholder="None"
              error={errors.offset}
              hint="For counts: the log of exposure time."
            />
          </div>
        )}
      </Section>

      {family === "cox" || repeated ? null : (
        <PublishedValuesSection
          initial={initial.published ?? []}
          family={family}
          arms={levels(treatment).map((l) => l.value)}
          reference={reference}
          terms={[...(treatment ? [treatment] : []), ...included].map((v) => ({
            variable: v,
            categorical:
              v === treatment || covariates.get(v)?.categorical === true || col(v)?.type !== "number",
            levels: levels(v).map((l) => l.value),
          }))}
          errors={errors}
        />
      )}

      <Section
        title="Checks"
        note="Each check ends as within plan or as a finding. Defaults come from common practice; the source is given. Edit a threshold where the SAP states another."
      >
        <table className="data-table">
          <thead>
            <tr>
              <th scope="col">Planned</th>
              <th scope="col">Check and rule</th>
              <th scope="col">Threshold k</th>
              <th scope="col">Planned remedy</th>
            </tr>
          </thead>
          <tbody key={family}>
            {checkCatalogue
              .filter((c) => checkApplies(c, family, Boolean(treatment)))
              .map((c) => {
                // A new model, or one given another family, starts with every check that applies to its family.
                const current =
                  isNew || family !== initial.family
                    ? { ...(initial.checks.find((x) => x.key === c.key) ?? {}), enabled: true }
                    : initial.checks.find((x) => x.key === c.key);
                const err = errors[`check:${c.key}:threshold`];
                return (
                  <tr key={c.key}>
                    <td>
                      <input
                        type="checkbox"
                        id={`chk-${c.key}`}
                        name={`check:${c.key}:enabled`}
                        defaultChecked={current?.enabled ?? false}
                      />
                    </td>
                    <td>
                      <label htmlFor={`chk-${c.key}`} className="font-medium">
                        {c.label}
                      </label>
                      <span className="block text-xs text-ink-soft">
                        {c.rule}. Default from {c.source}.
                        {c.models === "both"
                          ? ""
                          : c.models === "linear"
                            ? " Linear models."
                            : c.models === "cox"
                              ? " Time-to-event (Cox) models."
                              : c.models === "repeated"
                                ? " Repeated-measures (MMRM) models."
                                : " Generalized linear models."}
                      </span>
                    </td>
                    <td>
                      <input
                        aria-label={`Threshold for ${c.label}`}
                        name={`check:${c.key}:threshold`}
                        inputMode="decimal"
                        className="field num w-24"
                        defaultValue={String(
                          Number((current?.threshold ?? c.defaultThreshold).toPrecision(6)),
                        )}
                        aria-invalid={err ? true : undefined}
                      />
                      <FieldError id={`chk-${c.key}-error`} message={err} />
                    </td>
                    <td>
                      <input
                        aria-label={`Planned remedy for ${c.label}`}
                        name={`check:${c.key}:remedy`}
                        className="field text-xs"
                        defaultValue={current?.remedy ?? c.defaultRemedy}
                      />
                    </td>
                  </tr>
                );
              })}
          </tbody>
        </table>
      </Section>

      <Section
        title="Planned sensitivity analyses"
        note="Each runs by itself once the primary analysis has completed, and sits beside it so its effect on the treatment estimate is visible at a glance."
      >
        <div className="space-y-2 text-sm">
          {offered("robust_hc3") ? (
            <label className="flex items-center gap-2">
              <input type="checkbox" name="sensitivity:robust_hc3" defaultChecked={sens.has("robust_hc3")} />{" "}
              Robust (HC3) standard errors
              {family === "gaussian" ? "" : " (sandwich covariance of the coefficients)"}
            </label>
          ) : null}
          {offered("variance_function") ? (
            <div className="flex flex-wrap items-center gap-2">
              <label className="flex items-center gap-2">
                <input
                  type="checkbox"
                  name="sensitivity:variance_function"
                  defaultChecked={sens.has("variance_function")}
                />{" "}
                Weighted fit with an estimated variance function, depending on
              </label>
              <select
                aria-label="What the variance depends on"
                name="sensitivity:varianceBy"
                className="field w-auto py-1"
                defaultValue={sens.get("variance_function")?.varianceBy ?? "fitted"}
              >
                <option value="fitted">the fitted values</option>
                <option value="treatment">the treatment arm</option>
              </select>
              <FieldError id="sens-var-error" message={errors["sensitivity:varianceBy"]} />
            </div>
          ) : null}
          {offered("exclude_influential") ? (
            <label className="flex items-center gap-2">
              <input
                type="checkbox"
                name="sensitivity:exclude_influential"
                defaultChecked={sens.has("exclude_influential")}
              />{" "}
              Excluding the subjects flagged by the Cook's distance check
            </label>
          ) : null}
          {offered("quasi_poisson") ? (
            <>
              <label className="flex items-center gap-2">
                <input
                  type="checkbox"
                  name="sensitivity:quasi_poisson"
                  defaultChecked={sens.has("quasi_poisson")}
                />{" "}
                Counts: quasi-Poisson (dispersion estimated)
              </label>
              <label className="flex items-center gap-2">
                <input
                  type="checkbox"
                  name="sensitivity:negative_binomial"
                  defaultChecked={sens.has("negative_binomial")}
                />{" "}
                Counts: negative binomial (NB2, θ by maximum likelihood)
              </label>
            </>
          ) : null}
          {offered("cox_rmst") ? (
            <>
              <label className="flex items-center gap-2">
                <input
                  type="checkbox"
                  name="sensitivity:cox_robust_subject"
                  defaultChecked={sens.has("cox_robust_subject")}
                />{" "}
                Time to event: robust (sandwich) standard errors, clustered by subject
              </label>
              <label className="flex items-center gap-2">
                <input
                  type="checkbox"
                  name="sensitivity:cox_unstratified"
                  defaultChecked={sens.has("cox_unstratified")}
                />{" "}
                Time to event: unstratified (one baseline hazard for all subjects)
              </label>
              <div className="flex flex-wrap items-center gap-2">
                <label className="flex items-center gap-2">
                  <input type="checkbox" name="sensitivity:cox_rmst" defaultChecked={sens.has("cox_rmst")} />{" "}
                  Time to event: restricted mean survival time difference between arms, up to the horizon τ =
                </label>
                <input
                  aria-label="Horizon τ of the restricted mean, in the units of the follow-up time"
                  name="sensitivity:tau"
                  inputMode="decimal"
                  className="field num w-24 py-1"
                  defaultValue={sens.get("cox_rmst")?.tau ?? ""}
                  aria-invalid={errors["sensitivity:tau"] ? true : undefined}
                  aria-describedby={errors["sensitivity:tau"] ? "sens-tau-error" : undefined}
                />
                <FieldError id="sens-tau-error" message={errors["sensitivity:tau"]} />
              </div>
            </>
          ) : null}
          {offered("repeated_structure") ? (
            <div className="flex flex-wrap items-center gap-2">
              <label className="flex items-center gap-2">
                <input
                  type="checkbox"
                  name="sensitivity:repeated_structure"
                  defaultChecked={sens.has("repeated_structure")}
                />{" "}
                Repeated measures: refitted with another covariance structure of the visits,
              </label>
              <select
                aria-label="Covariance structure of the sensitivity analysis"
                name="sensitivity:structure"
                className="field w-auto py-1"
                defaultValue={sens.get("repeated_structure")?.structure ?? "compound-symmetry"}
                aria-invalid={errors["sensitivity:structure"] ? true : undefined}
                aria-describedby={errors["sensitivity:structure"] ? "sens-structure-error" : undefined}
              >
                {COVARIANCE_STRUCTURES.map((s) => (
                  <option key={s} value={s}>
                    {COVARIANCE_STRUCTURE_WORDS[s]}
                  </option>
                ))}
              </select>
              <FieldError id="sens-structure-error" message={errors["sensitivity:structure"]} />
            </div>
          ) : null}
          <FieldError
            id="sens-family-error"
            message={
              errors["sensitivity:quasi_poisson"] ??
              errors["sensitivity:negative_binomial"] ??
              errors["sensitivity:robust_hc3"] ??
              errors["sensitivity:variance_function"] ??
              errors["sensitivity:cox_robust_subject"] ??
              errors["sensitivity:cox_unstratified"] ??
              errors["sensitivity:exclude_influential"] ??
              errors["sensitivity:repeated_structure"]
            }
          />
          <div>
            <label className="flex items-center gap-2">
              <input
                type="checkbox"
                name="sensitivity:alternative_covariates"
                defaultChecked={sens.has("alternative_covariates")}
              />{" "}
              An alternative covariate set, named
              <input
                aria-label="Name of the alternative covariate set"
                name="sensitivity:label"
                className="field w-64 py-1"
                defaultValue={sens.get("alternative_covariates")?.label ?? "Minimal adjustment"}
              />
            </label>
            <div className="mt-1 flex flex-wrap gap-x-4 pl-6">
              {candidateCovariates.map((c) => (
                <label key={c.name} className="inline-flex items-center gap-1 text-xs">
                  <input
                    type="checkbox"
                    name="sensitivity:covariate"
                    value={c.name}
                    defaultChecked={sens.get("alternative_covariates")?.covariates?.includes(c.name) ?? false}
                  />
                  {c.name}
                </label>
              ))}
            </div>
            <FieldError id="sens-cov-error" message={errors["sensitivity:covariate"]} />
          </div>
        </div>
      </Section>
    </div>
  );
}
