/**
 * The repeated-measures (MMRM) part of a planned model: the subject and visit columns, the
 * visits' order, the covariance structure of the visits within a subject and its ordered
 * fallbacks, the degrees-of-freedom method, REML or ML, and the primary visit, validated against
 * the locked dataset's column metadata. Errors are keyed by the editor's field names and say
 * what to do. The shared fields (endpoint, treatment, covariates, interactions, population,
 * means, contrasts, multiplicity) were read and checked by planned-model.ts; this adds the
 * rules of a repeated-measures model and builds its specification.
 */
import type { Term } from "~/engine/model-spec";
import { linearBasis } from "~/engine/repeated/kenward-roger";
import {
  COVARIANCE_STRUCTURE_WORDS,
  REPEATED_DF_WORDS,
  REPEATED_METHOD_WORDS,
  sentenceCase,
} from "~/engine/repeated/repeated-names";
import {
  covarianceStructureSchema,
  repeatedDfSchema,
  repeatedMethodSchema,
  repeatedSpecSchema,
  type CovarianceStructureName,
  type RepeatedSpec,
} from "~/engine/repeated/repeated-spec";
import type { ColumnMeta } from "../datasets/catalog.server";
import { isNumericType } from "../datasets/categorical-hint";

/** The editor's repeated-measures fields, as posted. */
export interface RepeatedForm {
  subject: string;
  visit: string;
  /** Numeric column giving the visits' order; empty: the visit levels' own order. */
  visitOrder: string;
  covariance: string;
  /** Structures to try, in order, when the planned one does not converge (empty entries dropped). */
  fallback: string[];
  df: string;
  method: string;
  /** A level of the visit column; empty: the last visit by order. */
  primaryVisit: string;
}

export const EMPTY_REPEATED_FORM: RepeatedForm = {
  subject: "",
  visit: "",
  visitOrder: "",
  covariance: "unstructured",
  fallback: [],
  df: "satterthwaite",
  method: "reml",
  primaryVisit: "",
};

const str = (f: FormData, k: string): string => String(f.get(k) ?? "").trim();

export function readRepeatedForm(f: FormData): RepeatedForm {
  return {
    subject: str(f, "subject"),
    visit: str(f, "visit"),
    visitOrder: str(f, "visitOrder"),
    covariance: str(f, "covariance") || "unstructured",
    fallback: f
      .getAll("fallback")
      .map((v) => String(v).trim())
      .filter(Boolean),
    df: str(f, "df") || "satterthwaite",
    method: str(f, "method") || "reml",
    primaryVisit: str(f, "primaryVisit"),
  };
}

/** The editor's repeated-measures fields of a stored specification (the inverse of validateRepeated). */
export function repeatedFormOf(spec: RepeatedSpec): RepeatedForm {
  const r = spec.repeated;
  return {
    subject: r.subject,
    visit: r.visit,
    visitOrder: r.visitOrder ?? "",
    covariance: r.covariance,
    fallback: [...r.fallback],
    df: r.df,
    method: r.method,
    primaryVisit: r.primaryVisit ?? "",
  };
}

/** Visit names as a person reads them ("Week 2" before "Week 12"), for messages only; the order the model uses is the plan's. */
const naturalOrder = (names: readonly string[]) =>
  [...names].sort((a, b) => a.localeCompare(b, "en", { numeric: true }));

const words = (s: CovarianceStructureName) => COVARIANCE_STRUCTURE_WORDS[s];
const structureLabel = (s: CovarianceStructureName) => sentenceCase(COVARIANCE_STRUCTURE_WORDS[s]);

/** Kenward–Roger's df are computed for structures linear in their parameters (kenward-roger.ts). */
const kenwardRogerAvailable = (s: CovarianceStructureName) => linearBasis(s, 1) !== null;
const KENWARD_ROGER_STRUCTURES = covarianceStructureSchema.options.filter(kenwardRogerAvailable);

/**
 * Whether the order column gives each visit one value, as far as the locked dataset's column
 * summaries tell: the same number of distinct values as visits, with the same row counts.
 * The summaries keep level counts of a numeric column only for whole numbers with few distinct
 * values; for others the pairing is checked when the rerun reads the rows (repeated-data.ts).
 */
function visitOrderProblem(order: ColumnMeta, visit: ColumnMeta): string | null {
  if (!isNumericType(order.type))
    return `${order.name} is ${order.type}, not numeric: the visit order column gives each visit a number (e.g. AVISITN), so choose a numeric column or none.`;
  if (!visit.levels || !order.levels) return null;
  const visits = visit.levels.length;
  if (order.levels.length !== visits)
    return `${order.name} has ${order.levels.length} distinct values but ${visit.name} has ${visits} visits: the order column needs exactly one value per visit.`;
  const counts = (c: ColumnMeta) => (c.levels ?? []).map((l) => l.count).sort((a, b) => a - b);
  if (order.missing !== visit.missing || counts(order).join() !== counts(visit).join())
    return `The rows of ${order.name} do not pair with the visits of ${visit.name} (rows per value ${counts(order).join(", ")}; rows per visit ${counts(visit).join(", ")}): every row of a visit must carry that visit's one order value.`;
  return null;
}

/**
 * Checks the repeated-measures fields and builds the specification from them and the terms the
 * shared part of the form already validated. Adds to `errors`; returns null when there are any.
 */
export function validateRepeated(
  form: {
    response: string;
    treatment: string;
    weights: string;
    offset: string;
    repeated?: RepeatedForm;
  },
  terms: Term[],
  shared: {
    population?: RepeatedSpec["population"];
    means?: RepeatedSpec["means"];
    contrasts?: RepeatedSpec["contrasts"];
    multiplicity?: RepeatedSpec["multiplicity"];
  },
  dataset: { name: string; columns: ColumnMeta[] },
  errors: Record<string, string>,
): RepeatedSpec | null {
  const r = form.repeated ?? EMPTY_REPEATED_FORM;
  const col = new Map(dataset.columns.map((c) => [c.name, c]));
  const mainTerm = (name: string) =>
    terms.find((t): t is Extract<Term, { variable: string }> => "variable" in t && t.variable === name);

  const response = col.get(form.response);
  if (response && !isNumericType(response.type))
    errors.response = `${response.name} is ${response.type}, not numeric: a repeated-measures model needs a numeric endpoint, usually the change from baseline.`;

  // prior weights and an offset have no place in the model's likelihood (repeated-spec.ts refuses them)
  if (form.weights)
    errors.weights =
      "A repeated-measures model takes no prior weights: the covariance of the visits weighs the records. Choose none.";
  if (form.offset) errors.offset = "A repeated-measures model takes no offset: choose none.";

  const subject = r.subject ? col.get(r.subject) : undefined;
  if (!r.subject)
    errors.subject =
      "Choose the subject identifier column (e.g. USUBJID): the records of one subject are correlated.";
  else if (!subject) errors.subject = `Column "${r.subject}" is not in ${dataset.name}.`;
  else if (r.subject === form.response) errors.subject = "The subject column cannot also be the endpoint.";
  else if (r.subject === form.treatment)
    errors.subject = "The subject column cannot also be the treatment: choose the subject identifier.";
  else if (r.subject === r.visit) errors.subject = "The subject and visit columns must differ.";
  else if (mainTerm(r.subject) || terms.some((t) => "interaction" in t && t.interaction.includes(r.subject)))
    errors.subject = `${r.subject} identifies subjects; untick it among the covariates (a term per subject would leave nothing for the covariance of the visits).`;

  const visit = r.visit ? col.get(r.visit) : undefined;
  const visitTerm = mainTerm(r.visit);
  const visitLevels = visit?.levels?.map((l) => l.value) ?? [];
  if (!r.visit) errors.visit = "Choose the visit column (e.g. AVISIT).";
  else if (!visit) errors.visit = `Column "${r.visit}" is not in ${dataset.name}.`;
  else if (r.visit === form.response || r.visit === form.treatment)
    errors.visit = `${r.visit} is already the ${r.visit === form.response ? "endpoint" : "treatment"}: choose the visit column.`;
  else if (!visit.levels || visitLevels.length < 2)
    errors.visit = `${visit.name} must be categorical with a few visits; it ${visit.levels ? "has only one value" : "has too many distinct values"}.`;
  else if (!visitTerm)
    errors.visit = `${visit.name} must also be a main term of the model: tick it among the covariates, as categorical.`;
  else if (isNumericType(visit.type) && visitTerm.categorical !== true && !errors[`covariate:${visit.name}`])
    errors.visit = `${visit.name} enters the model as continuous: mark it categorical among the covariates (a mean per visit).`;

  if (r.visitOrder) {
    const order = col.get(r.visitOrder);
    if (!order) errors.visitOrder = `Column "${r.visitOrder}" is not in ${dataset.name}.`;
    else if (r.visitOrder === r.subject || r.visitOrder === form.response)
      errors.visitOrder = `${r.visitOrder} is the ${r.visitOrder === r.subject ? "subject" : "endpoint"} column: choose the column that numbers the visits, or none.`;
    else if (visit && !errors.visit) {
      const problem = visitOrderProblem(order, visit);
      if (problem) errors.visitOrder = problem;
    }
  }

  const covariance = covarianceStructureSchema.safeParse(r.covariance);
  if (!covariance.success)
    errors.covariance = `Choose the covariance structure of the visits: ${Object.values(COVARIANCE_STRUCTURE_WORDS).join(", ")}.`;
  const fallback: CovarianceStructureName[] = [];
  for (const name of r.fallback) {
    const s = covarianceStructureSchema.safeParse(name);
    if (!s.success) {
      errors.fallback = `"${name.slice(0, 40)}" is not a covariance structure Plumbline fits; choose from the list.`;
      break;
    }
    if (covariance.success && s.data === covariance.data) {
      errors.fallback = `${structureLabel(s.data)} is the planned structure; a fallback must be another structure: remove it from the list.`;
      break;
    }
    if (fallback.includes(s.data)) {
      errors.fallback = `${structureLabel(s.data)} is in the fallback list twice: keep it once, where the SAP orders it.`;
      break;
    }
    fallback.push(s.data);
  }

  const df = repeatedDfSchema.safeParse(r.df);
  const method = repeatedMethodSchema.safeParse(r.method);
  if (!df.success) errors.df = "Choose the degrees of freedom: Satterthwaite, Kenward–Roger or residual.";
  if (!method.success) errors.method = "Choose REML or ML.";
  if (df.success && df.data === "kenward-roger") {
    if (method.success && method.data !== "reml")
      errors.method =
        "Kenward–Roger degrees of freedom need a REML fit: choose REML, or Satterthwaite degrees of freedom with ML.";
    const lacking = [...(covariance.success ? [covariance.data] : []), ...fallback].filter(
      (s) => !kenwardRogerAvailable(s),
    );
    if (lacking.length > 0)
      errors.df = `Kenward–Roger degrees of freedom are computed for the ${KENWARD_ROGER_STRUCTURES.map(words).join(", ")} structures, not for ${lacking.map(words).join(" or ")}: choose Satterthwaite, or change the structure${fallback.length ? " and its fallbacks" : ""}.`;
  }

  if (r.primaryVisit && visit && !errors.visit && !visitLevels.includes(r.primaryVisit))
    errors.primaryVisit = `"${r.primaryVisit.slice(0, 40)}" is not a visit of ${visit.name}; its visits are ${naturalOrder(visitLevels).join(", ")}.`;

  if (Object.keys(errors).length > 0) return null;
  return repeatedSpecSchema.parse({
    response: form.response,
    family: "gaussian",
    intercept: true,
    terms,
    // the subject column names the records' subjects for the pages' redaction, as `id` does for other models
    id: r.subject,
    ...(form.treatment ? { treatment: form.treatment } : {}),
    ...(shared.population && shared.population.length > 0 ? { population: shared.population } : {}),
    ...(shared.means && shared.means !== "equal" ? { means: shared.means } : {}),
    ...(shared.contrasts && shared.contrasts !== "reference" ? { contrasts: shared.contrasts } : {}),
    ...(shared.multiplicity && shared.multiplicity !== "none" ? { multiplicity: shared.multiplicity } : {}),
    repeated: {
      subject: r.subject,
      visit: r.visit,
      ...(r.visitOrder ? { visitOrder: r.visitOrder } : {}),
      covariance: covariance.data,
      fallback,
      df: df.data,
      method: method.data,
      ...(r.primaryVisit ? { primaryVisit: r.primaryVisit } : {}),
    },
  });
}

/**
 * Why a planned "another covariance structure" sensitivity analysis does not fit the model's
 * repeated fields (as posted); null when it does.
 */
export function structureSensitivityProblem(
  structure: string | undefined,
  repeated: Pick<RepeatedForm, "covariance" | "df">,
): string | null {
  const s = covarianceStructureSchema.safeParse(structure);
  if (!s.success) return "Choose the covariance structure of the sensitivity analysis.";
  if (s.data === repeated.covariance)
    return `${structureLabel(s.data)} is the planned structure, so the analysis would repeat the primary one: choose another structure.`;
  if (repeated.df === "kenward-roger" && !kenwardRogerAvailable(s.data))
    return `Kenward–Roger degrees of freedom are computed for the ${KENWARD_ROGER_STRUCTURES.map(words).join(", ")} structures, not for ${words(s.data)}: choose one of those, or Satterthwaite degrees of freedom.`;
  return null;
}

/** A repeated-measures model's own fields in words (plan view and plan diff): subject, visits and their order, covariance, df, likelihood, primary visit. */
export function repeatedWords(s: RepeatedSpec): [string, string][] {
  const r = s.repeated;
  return [
    ["Subject", r.subject],
    ["Visit", r.visitOrder ? `${r.visit}, ordered by ${r.visitOrder}` : `${r.visit}, ordered by its values`],
    [
      "Covariance of the visits",
      r.fallback.length
        ? `${structureLabel(r.covariance)}; if it does not converge, ${r.fallback.map(words).join(", then ")}`
        : `${structureLabel(r.covariance)}; no fallback`,
    ],
    ["Degrees of freedom", sentenceCase(REPEATED_DF_WORDS[r.df])],
    ["Estimation", sentenceCase(REPEATED_METHOD_WORDS[r.method])],
    ["Primary visit", r.primaryVisit ?? "the last visit by order"],
  ];
}
