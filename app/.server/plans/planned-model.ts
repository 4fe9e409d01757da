/**
 * A planned model as the plan states it: which locked dataset it reads, the population, the
 * model specification (the same object the headless rerun command reads), the checks with
 * their thresholds, and the planned sensitivity analyses. Built from the editor's form and
 * validated against the dataset's columns, so every error can be shown beside its field.
 */
import { z } from "zod";
import { CHECKS, type CheckKey, type PlannedCheck } from "~/engine/checks";
import {
  contrastsSchema,
  meansWeightingSchema,
  modelSpecSchema,
  type ModelSpec,
  type Term,
} from "~/engine/model-spec";
import { multiplicitySchema } from "~/engine/multiplicity";
import { populationFromLegacy, type PopulationCondition } from "~/engine/population";
import {
  populationFormOf,
  readPopulationForm,
  validatePopulation,
  type PopulationConditionForm,
} from "./population-form";
import { interactionName } from "~/engine/coefficient-names";
import type { ColumnMeta } from "../datasets/catalog.server";
import { categoricalHints, isNumericType } from "../datasets/categorical-hint";
import { covarianceStructureSchema, repeatedSpecSchema } from "~/engine/repeated/repeated-spec";
import { coxSpecSchema } from "~/engine/survival/cox-spec";
import { readSurvivalForm, survivalFormOf, validateSurvival, type SurvivalForm } from "./cox-planned-model";
import {
  readRepeatedForm,
  repeatedFormOf,
  structureSensitivityProblem,
  validateRepeated,
  EMPTY_REPEATED_FORM,
  type RepeatedForm,
} from "./repeated-planned-model";
import {
  publishedFormOf,
  readPublishedForm,
  validatePublished,
  type PublishedRowForm,
} from "./published-planned-values";

import {
  checkApplies,
  SENSITIVITY_KINDS,
  sensitivityProblem,
  type SensitivityKind,
} from "~/engine/family-applicability";

export { SENSITIVITY_KINDS, type SensitivityKind };

export const SENSITIVITY_LABELS: Record<SensitivityKind, string> = {
  robust_hc3: "Robust (HC3) standard errors",
  variance_function: "Weighted fit with an estimated variance function",
  exclude_influential: "Excluding subjects flagged by the Cook's distance check",
  alternative_covariates: "Alternative covariate set",
  quasi_poisson: "Quasi-Poisson (dispersion estimated)",
  negative_binomial: "Negative binomial (NB2)",
  cox_robust_subject: "Robust (sandwich) standard errors, clustered by subject",
  cox_unstratified: "Unstratified (one baseline hazard for all subjects)",
  cox_rmst: "Restricted mean survival time difference between arms",
  repeated_structure: "Another covariance structure of the visits",
};

export const sensitivitySchema = z.object({
  kind: z.enum(SENSITIVITY_KINDS),
  /** variance_function: what the variance depends on. */
  varianceBy: z.enum(["fitted", "treatment"]).optional(),
  /** alternative_covariates: the covariates of the alternative set. */
  covariates: z.array(z.string()).optional(),
  /** cox_rmst: the horizon τ of the restricted mean, in the time column's units. */
  tau: z.number().positive().optional(),
  /** repeated_structure: the covariance structure of the visits refitted (read by planned-sensitivity.ts). */
  structure: covarianceStructureSchema.optional(),
  label: z.string().optional(),
});
export type PlannedSensitivity = z.infer<typeof sensitivitySchema>;

const checkKeys = CHECKS.map((c) => c.key) as [CheckKey, ...CheckKey[]];
export const plannedCheckSchema = z.object({
  key: z.enum(checkKeys),
  enabled: z.boolean(),
  threshold: z.number().positive(),
  remedy: z.string().max(300),
});

/** The population of plans stored before conditions (one column equal to one value); translated on read. */
export const legacyPopulationSchema = z
  .object({ column: z.string().min(1), value: z.string().min(1) })
  .nullable();
export type LegacyPopulation = z.infer<typeof legacyPopulationSchema>;

/** The model's population conditions (empty: every row). They live in the specification, as the headless command reads them. */
export function populationOf(m: { spec: { population?: PopulationCondition[] } }): PopulationCondition[] {
  return m.spec.population ?? [];
}

/** A stored planned model's specification with an old single-condition population carried into it. */
export function withLegacyPopulation<S extends { population?: PopulationCondition[] }>(
  spec: S,
  legacy: LegacyPopulation,
): S {
  return legacy && !spec.population ? { ...spec, population: populationFromLegacy(legacy) } : spec;
}

export const ANALYSIS_CHOICES = {
  means: meansWeightingSchema.options,
  contrasts: contrastsSchema.options,
  multiplicity: multiplicitySchema.options,
} as const;

export const plannedModelSchema = z.object({
  key: z.string(),
  title: z.string(),
  datasetName: z.string(),
  /**
   * A repeated-measures (MMRM) model (narrow on `"repeated" in spec`; tried first, since it is a
   * linear specification plus `repeated`), a time-to-event (Cox) model (`spec.family === "cox"`),
   * or a linear or generalized linear model.
   */
  spec: z.union([repeatedSpecSchema, modelSpecSchema, coxSpecSchema]),
  checks: z.array(plannedCheckSchema),
  sensitivity: z.array(sensitivitySchema),
});
export type PlannedModel = z.infer<typeof plannedModelSchema>;

export type FieldErrors = Record<string, string>;

/**
 * The model families the editor offers; anything else is refused, never stored as another family.
 * "repeated" is a repeated-measures (MMRM) model: a normal linear model with correlated visits,
 * stored as a linear specification with a `repeated` part (repeated-planned-model.ts).
 */
export const MODEL_FAMILIES = ["gaussian", "binomial", "poisson", "cox", "repeated"] as const;

/** The editor's fields, as posted. */
export interface PlannedModelForm {
  key: string;
  title: string;
  datasetName: string;
  /** Population conditions, all of which an analysed row meets (population-form.ts). */
  population: PopulationConditionForm[];
  response: string;
  family: string;
  link: string;
  treatment: string;
  treatmentReference: string;
  /** `categorical` is null when the editor made no explicit choice (see categorical-hint.ts). */
  covariates: { variable: string; categorical: boolean | null; reference: string }[];
  interactions: string[][];
  weights: string;
  offset: string;
  id: string;
  checks: PlannedCheck[];
  sensitivity: PlannedSensitivity[];
  /** Adjusted-means weighting, contrast set and multiplicity method (linear and generalized linear models). */
  means: string;
  contrasts: string;
  multiplicity: string;
  /** Time-to-event fields, read when the family is "cox" (cox-planned-model.ts). */
  survival?: SurvivalForm;
  /** Repeated-measures fields, read when the family is "repeated" (repeated-planned-model.ts). */
  repeated?: RepeatedForm;
  /** Values the study report printed, for the reproduction check (published-planned-values.ts). */
  published: PublishedRowForm[];
}

const str = (f: FormData, k: string): string => String(f.get(k) ?? "").trim();

/**
 * How a numeric covariate enters the model: `as:<column>` is "categorical" or "continuous" (the
 * editor's explicit choice for a column that looks categorical); a ticked `categorical:<column>`
 * box means categorical; neither is no choice (null).
 */
function choiceOf(f: FormData, variable: string): boolean | null {
  const as = str(f, `as:${variable}`);
  if (as === "categorical" || f.get(`categorical:${variable}`) === "on") return true;
  if (as === "continuous") return false;
  return null;
}

/** Reads the editor's form; field names are documented beside the inputs in the editor. */
export function readPlannedModelForm(f: FormData): PlannedModelForm {
  const covariates = f.getAll("covariate").map(String).filter(Boolean);
  return {
    key: str(f, "key"),
    title: str(f, "title"),
    datasetName: str(f, "datasetName"),
    population: readPopulationForm(f),
    means: str(f, "means") || "equal",
    contrasts: str(f, "contrasts") || "reference",
    multiplicity: str(f, "multiplicity") || "none",
    response: str(f, "response"),
    family: str(f, "family") || "gaussian",
    link: str(f, "link"),
    treatment: str(f, "treatment"),
    treatmentReference: str(f, "treatmentReference"),
    covariates: covariates.map((variable) => ({
      variable,
      categorical: choiceOf(f, variable),
      reference: str(f, `reference:${variable}`),
    })),
    interactions: f
      .getAll("interaction")
      .map(String)
      .filter(Boolean)
      .map((s) => s.split("|")),
    weights: str(f, "weights"),
    offset: str(f, "offset"),
    id: str(f, "id"),
    checks: CHECKS.map((c) => ({
      key: c.key,
      enabled: f.get(`check:${c.key}:enabled`) === "on",
      threshold: Number(str(f, `check:${c.key}:threshold`) || c.defaultThreshold),
      remedy: str(f, `check:${c.key}:remedy`) || c.defaultRemedy,
    })),
    ...(str(f, "family") === "cox" ? { survival: readSurvivalForm(f) } : {}),
    ...(str(f, "family") === "repeated" ? { repeated: readRepeatedForm(f) } : {}),
    published: readPublishedForm(f),
    sensitivity: SENSITIVITY_KINDS.filter((k) => f.get(`sensitivity:${k}`) === "on").map((kind) => ({
      kind,
      ...(kind === "variance_function"
        ? {
            varianceBy:
              str(f, "sensitivity:varianceBy") === "treatment" ? ("treatment" as const) : ("fitted" as const),
          }
        : {}),
      ...(kind === "alternative_covariates"
        ? {
            covariates: f.getAll("sensitivity:covariate").map(String).filter(Boolean),
            label: str(f, "sensitivity:label") || "Alternative covariate set",
          }
        : {}),
      ...(kind === "cox_rmst" ? { tau: Number(str(f, "sensitivity:tau") || Number.NaN) } : {}),
      // an unknown structure is left out, and the validation asks for one
      ...(kind === "repeated_structure"
        ? { structure: covarianceStructureSchema.safeParse(str(f, "sensitivity:structure")).data }
        : {}),
    })),
  };
}

const KEY_RE = /^[a-z0-9][a-z0-9_-]{0,39}$/;

/**
 * Checks the form against the chosen dataset's columns and types and builds the planned model.
 * Returns errors keyed by field name, each saying what to do.
 */
export function validatePlannedModel(
  form: PlannedModelForm,
  datasets: { name: string; columns: ColumnMeta[] }[],
  takenKeys: string[],
): { ok: true; model: PlannedModel } | { ok: false; errors: FieldErrors } {
  const errors: FieldErrors = {};
  if (!KEY_RE.test(form.key))
    errors.key =
      "Use 1–40 lower-case letters, digits, - or _, starting with a letter or digit (e.g. primary).";
  else if (takenKeys.includes(form.key))
    errors.key = `Another planned model in this version already uses the key "${form.key}".`;
  if (form.title.length < 3) errors.title = "Give the planned model a title, e.g. Primary efficacy.";
  const dataset = datasets.find((d) => d.name === form.datasetName);
  if (!dataset) {
    errors.datasetName =
      datasets.length === 0
        ? "No dataset of this study is locked yet: a data manager must lock one first."
        : "Choose the locked dataset this model reads.";
    return { ok: false, errors };
  }
  const col = new Map(dataset.columns.map((c) => [c.name, c]));
  const looksCategorical = categoricalHints(dataset.columns);
  const levelsOf = (name: string): string[] => col.get(name)?.levels?.map((l) => l.value) ?? [];
  const need = (field: string, name: string, label: string): ColumnMeta | null => {
    if (!name) {
      errors[field] = `Choose the ${label}.`;
      return null;
    }
    const c = col.get(name);
    if (!c) errors[field] = `Column "${name}" is not in ${dataset.name}.`;
    return c ?? null;
  };

  const population = validatePopulation(form.population, dataset, errors);

  const family = MODEL_FAMILIES.find((f) => f === form.family) ?? "gaussian";
  if (!MODEL_FAMILIES.some((f) => f === form.family)) {
    errors.family = `"${form.family.slice(0, 40)}" is not a model family Plumbline fits; choose ${MODEL_FAMILIES.join(", ")}.`;
  }
  const response = need("response", form.response, "endpoint (response) column");
  if (response && family === "gaussian" && response.type !== "number")
    errors.response = `${response.name} is ${response.type}, not numeric: a linear model needs a numeric endpoint.`;
  if (response && family === "poisson" && response.type !== "number")
    errors.response = `${response.name} must hold counts for a Poisson model.`;
  const zeroOne =
    response?.type === "number" &&
    response.min !== undefined &&
    response.max !== undefined &&
    response.min >= 0 &&
    response.max <= 1;
  if (response && family === "binomial" && !zeroOne && !(response.levels && response.levels.length === 2))
    errors.response = `${response.name} must be 0/1 or have exactly two values for a binomial model${response.levels ? ` (it has ${response.levels.length})` : ""}.`;

  const terms: Term[] = [];
  const mainVariables = new Set<string>();
  if (form.treatment) {
    const t = need("treatment", form.treatment, "treatment variable");
    if (t) {
      const levels = levelsOf(t.name);
      if (levels.length < 2) errors.treatment = `${t.name} needs at least two arms; it has ${levels.length}.`;
      else if (form.treatmentReference && !levels.includes(form.treatmentReference))
        errors.treatmentReference = `"${form.treatmentReference}" is not an arm of ${t.name}; the arms are ${levels.join(", ")}.`;
      else if (!form.treatmentReference)
        errors.treatmentReference = "Choose the reference arm (usually placebo).";
      terms.push({ variable: t.name, categorical: true, reference: form.treatmentReference || undefined });
      mainVariables.add(t.name);
    }
  }
  for (const cv of form.covariates) {
    const field = `covariate:${cv.variable}`;
    const c = need(field, cv.variable, "covariate");
    if (!c || mainVariables.has(cv.variable)) continue;
    if (cv.variable === form.response) {
      errors[field] = "The endpoint cannot also be a covariate.";
      continue;
    }
    const hint = looksCategorical.get(c.name); // numeric columns only
    if (hint && cv.categorical === null) {
      // Reported beside the field; the term still counts as a main term for the interactions.
      errors[field] =
        `${c.name} looks categorical (${hint}): choose whether it enters the model as categorical or continuous.`;
    }
    const categorical = cv.categorical === true || !isNumericType(c.type);
    if (categorical && cv.reference && c.levels && !levelsOf(c.name).includes(cv.reference))
      errors[field] =
        `"${cv.reference}" is not a value of ${c.name}; its values are ${levelsOf(c.name).join(", ")}.`;
    // An explicit "continuous" is kept as categorical: false, so the plan says it was chosen.
    terms.push(
      categorical
        ? { variable: c.name, categorical: true, ...(cv.reference ? { reference: cv.reference } : {}) }
        : cv.categorical === false
          ? { variable: c.name, categorical: false }
          : { variable: c.name },
    );
    mainVariables.add(c.name);
  }
  for (const parts of form.interactions) {
    const missing = parts.filter((p) => !mainVariables.has(p));
    if (parts.length < 2 || missing.length > 0) {
      errors.interactions = `The interaction ${interactionName(parts)} needs each of its variables as a main term${missing.length ? ` (missing: ${missing.join(", ")})` : ""}.`;
      continue;
    }
    terms.push({ interaction: parts });
  }
  for (const [field, name, label] of [
    ["weights", form.weights, "weights"],
    ["offset", form.offset, "offset"],
  ] as const) {
    if (!name) continue;
    const c = need(field, name, `${label} column`);
    if (c && c.type !== "number") errors[field] = `${c.name} must be numeric to serve as ${label}.`;
  }
  // a repeated-measures model names its subject column in its own fields
  if (form.id && family !== "repeated") need("id", form.id, "subject identifier column");

  for (const ch of form.checks) {
    if (!Number.isFinite(ch.threshold) || ch.threshold <= 0)
      errors[`check:${ch.key}:threshold`] = "Give a positive number.";
  }
  for (const s of form.sensitivity) {
    const problem = sensitivityProblem(s.kind, family);
    if (problem) errors[`sensitivity:${s.kind}`] = problem;
    if (s.kind === "cox_robust_subject" && family === "cox" && !form.id)
      errors[`sensitivity:${s.kind}`] =
        "Robust errors clustered by subject need the subject identifier column: choose it above.";
    if (s.kind === "cox_unstratified" && family === "cox" && (form.survival?.strata.length ?? 0) === 0)
      errors[`sensitivity:${s.kind}`] =
        "The model has no strata, so an unstratified analysis would repeat the primary one: add the strata or untick this.";
    if (s.kind === "cox_rmst" && family === "cox") {
      const time = dataset.columns.find((c) => c.name === form.response);
      if (!form.treatment)
        errors["sensitivity:tau"] =
          "A restricted mean survival time difference compares the treatment arms: choose the treatment above.";
      else if (!Number.isFinite(s.tau) || (s.tau ?? 0) <= 0)
        errors["sensitivity:tau"] =
          "Give the horizon τ of the restricted mean as a positive number in the units of the follow-up time.";
      else if (time?.max !== undefined && (s.tau ?? 0) > time.max)
        errors["sensitivity:tau"] =
          `The horizon τ = ${s.tau} is beyond the longest follow-up time in ${dataset.name} (${time.max}); choose a horizon within follow-up.`;
    }
    if (s.kind === "repeated_structure" && family === "repeated") {
      const problem = structureSensitivityProblem(s.structure, form.repeated ?? EMPTY_REPEATED_FORM);
      if (problem) errors["sensitivity:structure"] = problem;
    }
    if (s.kind === "alternative_covariates" && (!s.covariates || s.covariates.length === 0))
      errors["sensitivity:covariate"] = "Choose the covariates of the alternative set.";
    // An alternative covariate outside the main model enters as the column's type; for a column
    // that looks categorical that would be a silent choice, so the main model must make it.
    const unchosen =
      s.kind === "alternative_covariates"
        ? (s.covariates ?? []).filter((v) => looksCategorical.has(v) && !mainVariables.has(v))
        : [];
    if (unchosen.length > 0)
      errors["sensitivity:covariate"] =
        `${unchosen.join(", ")} ${unchosen.length === 1 ? "looks" : "look"} categorical and ${unchosen.length === 1 ? "is" : "are"} not in the main model, so nothing says categorical or continuous: add ${unchosen.length === 1 ? "it" : "them"} as a covariate with that choice, or leave ${unchosen.length === 1 ? "it" : "them"} out of the alternative set.`;
    if (s.kind === "variance_function" && s.varianceBy === "treatment" && !form.treatment)
      errors["sensitivity:varianceBy"] = "Variance per arm needs a treatment variable.";
  }

  const published = validatePublished(
    form.published,
    {
      family,
      treatment: form.treatment,
      reference: form.treatmentReference,
      mainTerms: terms.flatMap((t) =>
        "variable" in t ? [{ variable: t.variable, categorical: t.categorical === true }] : [],
      ),
      columns: col,
    },
    errors,
  );

  if (family === "cox") {
    const cox = validateSurvival(form, terms, dataset, errors);
    if (!cox || Object.keys(errors).length > 0) return { ok: false, errors };
    const spec = population.length > 0 ? { ...cox, population } : cox;
    return {
      ok: true,
      model: {
        key: form.key,
        title: form.title,
        datasetName: dataset.name,
        spec,
        checks: applicableChecks(form.checks, "cox", Boolean(form.treatment)),
        sensitivity: form.sensitivity,
      },
    };
  }
  const means = meansWeightingSchema.safeParse(form.means);
  const contrasts = contrastsSchema.safeParse(form.contrasts);
  const multiplicity = multiplicitySchema.safeParse(form.multiplicity);
  if (!means.success)
    errors.means = `Choose how adjusted means are weighted: ${ANALYSIS_CHOICES.means.join(" or ")}.`;
  if (!contrasts.success)
    errors.contrasts = `Choose the treatment contrasts: ${ANALYSIS_CHOICES.contrasts.join(" or ")}.`;
  if (!multiplicity.success)
    errors.multiplicity = `Choose the multiplicity adjustment: ${ANALYSIS_CHOICES.multiplicity.join(", ")}.`;
  if (!form.treatment && contrasts.success && contrasts.data === "pairwise")
    errors.contrasts =
      "Contrasts between arms need a treatment variable: choose it above, or keep contrasts against the reference arm.";
  if (!form.treatment && multiplicity.success && multiplicity.data !== "none")
    errors.multiplicity =
      "A multiplicity adjustment applies to the treatment contrasts: choose the treatment above, or choose no adjustment.";
  if (family === "repeated") {
    const repeated = validateRepeated(
      form,
      terms,
      { population, means: means.data, contrasts: contrasts.data, multiplicity: multiplicity.data },
      dataset,
      errors,
    );
    if (!repeated || Object.keys(errors).length > 0) return { ok: false, errors };
    return {
      ok: true,
      model: {
        key: form.key,
        title: form.title,
        datasetName: dataset.name,
        spec: repeated,
        checks: applicableChecks(form.checks, "repeated", Boolean(form.treatment)),
        sensitivity: form.sensitivity,
      },
    };
  }
  if (Object.keys(errors).length > 0) return { ok: false, errors };
  const spec: ModelSpec = modelSpecSchema.parse({
    response: form.response,
    family,
    ...(form.link ? { link: form.link } : {}),
    intercept: true,
    terms,
    ...(form.weights ? { weights: form.weights } : {}),
    ...(form.offset ? { offset: form.offset } : {}),
    ...(form.id ? { id: form.id } : {}),
    ...(form.treatment ? { treatment: form.treatment } : {}),
    ...(population.length > 0 ? { population } : {}),
    // defaults are left out, so a plan that chooses none stores the specification it stored before
    ...(means.data && means.data !== "equal" ? { means: means.data } : {}),
    ...(contrasts.data && contrasts.data !== "reference" ? { contrasts: contrasts.data } : {}),
    ...(multiplicity.data && multiplicity.data !== "none" ? { multiplicity: multiplicity.data } : {}),
    ...(published.length > 0 ? { published } : {}),
  });
  return {
    ok: true,
    model: {
      key: form.key,
      title: form.title,
      datasetName: dataset.name,
      spec,
      checks: applicableChecks(form.checks, family, Boolean(form.treatment)),
      sensitivity: form.sensitivity,
    },
  };
}

/** A check the model's family cannot have is stored as not planned (the editor does not offer it; family-applicability.ts). */
function applicableChecks(checks: PlannedCheck[], family: string, hasTreatment: boolean): PlannedCheck[] {
  return checks.map((c) => {
    const def = CHECKS.find((d) => d.key === c.key);
    return def && checkApplies(def, family, hasTreatment) ? c : { ...c, enabled: false };
  });
}

/** The editor's fields for an existing planned model (the inverse of readPlannedModelForm). */
export function toForm(m: PlannedModel): PlannedModelForm {
  const spec = m.spec;
  const main = spec.terms.filter((t): t is Extract<Term, { variable: string }> => "variable" in t);
  const treatmentTerm = main.find((t) => t.variable === spec.treatment);
  const shared = {
    key: m.key,
    title: m.title,
    datasetName: m.datasetName,
    population: populationFormOf(spec.population),
    response: spec.response,
    treatment: spec.treatment ?? "",
    treatmentReference: treatmentTerm?.reference ?? "",
    covariates: main
      .filter((t) => t.variable !== spec.treatment)
      .map((t) => ({
        variable: t.variable,
        categorical: t.categorical ?? null,
        reference: t.reference ?? "",
      })),
    interactions: spec.terms.flatMap((t) => ("interaction" in t ? [t.interaction] : [])),
    weights: spec.weights ?? "",
    offset: spec.offset ?? "",
    id: spec.id ?? "",
    checks: m.checks,
    sensitivity: m.sensitivity,
    published: spec.family === "cox" ? [] : publishedFormOf(spec.published),
  };
  if ("repeated" in spec)
    return {
      ...shared,
      family: "repeated",
      link: "",
      means: spec.means ?? "equal",
      contrasts: spec.contrasts ?? "reference",
      multiplicity: spec.multiplicity ?? "none",
      repeated: repeatedFormOf(spec),
    };
  return spec.family === "cox"
    ? {
        ...shared,
        family: "cox",
        link: "",
        means: "equal",
        contrasts: "reference",
        multiplicity: "none",
        survival: survivalFormOf(spec),
      }
    : {
        ...shared,
        family: spec.family,
        link: spec.link ?? "",
        means: spec.means ?? "equal",
        contrasts: spec.contrasts ?? "reference",
        multiplicity: spec.multiplicity ?? "none",
      };
}
