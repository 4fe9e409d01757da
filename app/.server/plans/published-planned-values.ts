/**
 * The published values of a planned model (the reproduction check, app/engine/reproduction.ts)
 * as the editor posts them, one row per value, and their validation against the model: arms of
 * the treatment, main terms and their levels, the measure a generalized linear model's contrast
 * needs, and the value as printed. Errors are keyed `published:<row>:<field>`. The values are
 * part of the model specification, so changing them changes the plan.
 */
import { PUBLISHED_STATISTICS, publishedValueSchema, type PublishedValue } from "~/engine/published-values";
import type { ColumnMeta } from "../datasets/catalog.server";

/** One row of the editor, as posted (every field text; unused fields empty). */
export interface PublishedRowForm {
  quantity: string;
  /** Contrast or mean: the arm; coefficient: the level of a categorical variable. */
  level: string;
  /** Contrast: the arm compared with (empty: the plan's reference arm). */
  reference: string;
  /** Contrast of a generalized linear model: the measure printed. */
  measure: string;
  /** Coefficient: the main term's variable. */
  variable: string;
  statistic: string;
  value: string;
}

/** The measures a contrast of each family reports (marginal-effects.ts). */
export const MEASURES_BY_FAMILY: Record<string, readonly string[]> = {
  binomial: ["risk difference", "risk ratio", "odds ratio"],
  poisson: ["rate ratio"],
};

/** Reads the rows `published:<i>:<field>` in row order, numbered again from 0 (removed rows leave gaps). */
export function readPublishedForm(f: FormData): PublishedRowForm[] {
  const rows = [...f.keys()]
    .map((k) => /^published:(\d+):quantity$/.exec(k)?.[1])
    .filter((i): i is string => i !== undefined)
    .map(Number)
    .sort((a, b) => a - b);
  const s = (i: number, field: string) => String(f.get(`published:${i}:${field}`) ?? "").trim();
  return [...new Set(rows)].map((i) => ({
    quantity: s(i, "quantity"),
    level: s(i, "level"),
    reference: s(i, "reference"),
    measure: s(i, "measure"),
    variable: s(i, "variable"),
    statistic: s(i, "statistic"),
    value: s(i, "value"),
  }));
}

/**
 * The editor's rows for stored values (the inverse of validatePublished). The editor offers the
 * coefficients of main terms; an interaction's coefficient can be named in the model JSON the
 * headless command reads, not in a stored plan.
 */
export function publishedFormOf(values: readonly PublishedValue[] | undefined): PublishedRowForm[] {
  return (values ?? []).map((v) => ({
    quantity: v.quantity,
    level: v.quantity === "coefficient" ? (v.term[0]?.level ?? "") : v.level,
    reference: v.quantity === "contrast" ? (v.reference ?? "") : "",
    measure: v.quantity === "contrast" ? (v.measure ?? "") : "",
    variable: v.quantity === "coefficient" ? v.term.map((p) => p.variable).join("|") : "",
    statistic: v.statistic,
    value: v.value,
  }));
}

interface ModelContext {
  family: string;
  treatment: string;
  reference: string;
  /** The main terms' variables (treatment and covariates) and whether each is categorical. */
  mainTerms: { variable: string; categorical: boolean }[];
  columns: ReadonlyMap<string, ColumnMeta>;
}

/**
 * Checks each row against the planned model and builds the stored values; errors go into
 * `errors` beside the row's field.
 */
export function validatePublished(
  rows: readonly PublishedRowForm[],
  m: ModelContext,
  errors: Record<string, string>,
): PublishedValue[] {
  const out: PublishedValue[] = [];
  const arms = m.treatment ? (m.columns.get(m.treatment)?.levels ?? []).map((l) => l.value) : [];
  rows.forEach((r, i) => {
    const err = (field: string, message: string) => {
      errors[`published:${i}:${field}`] ??= message;
    };
    if (m.family === "cox" || m.family === "repeated") {
      err(
        "quantity",
        `Published values are compared for linear and generalized linear models; remove this row for a ${m.family === "cox" ? "time-to-event" : "repeated-measures"} model.`,
      );
      return;
    }
    if (!(PUBLISHED_STATISTICS as readonly string[]).includes(r.statistic))
      err("statistic", "Choose which number was printed: estimate, SE, a 95% CI bound or p.");
    if (r.quantity === "mean" && r.statistic === "p")
      err("statistic", "An adjusted mean has no p-value: choose the estimate, its SE or a CI bound.");
    if (r.value === "")
      err("value", "Give the value exactly as the report printed it, e.g. -2.35 or <0.001.");
    let candidate: unknown;
    if (r.quantity === "contrast" || r.quantity === "mean") {
      if (!m.treatment) {
        err(
          "quantity",
          `A ${r.quantity === "contrast" ? "treatment contrast" : "adjusted mean"} needs the treatment variable: choose it above.`,
        );
        return;
      }
      if (!arms.includes(r.level))
        err(
          "level",
          r.level
            ? `"${r.level}" is not an arm of ${m.treatment}; the arms are ${arms.join(", ")}.`
            : `Choose the arm (${arms.join(", ")}).`,
        );
      else if (r.quantity === "contrast" && r.level === (r.reference || m.reference))
        err("level", "Choose an arm other than the one it is compared with.");
      if (r.quantity === "contrast" && r.reference && !arms.includes(r.reference))
        err("reference", `"${r.reference}" is not an arm of ${m.treatment}.`);
      const measures = MEASURES_BY_FAMILY[m.family];
      if (r.quantity === "contrast" && measures && !measures.includes(r.measure))
        err("measure", `Choose the measure printed: ${measures.join(", ")}.`);
      candidate =
        r.quantity === "contrast"
          ? {
              quantity: "contrast",
              level: r.level,
              ...(r.reference ? { reference: r.reference } : {}),
              ...(measures ? { measure: r.measure } : {}),
              statistic: r.statistic,
              value: r.value,
            }
          : { quantity: "mean", level: r.level, statistic: r.statistic, value: r.value };
    } else if (r.quantity === "coefficient") {
      const term = m.mainTerms.find((t) => t.variable === r.variable);
      if (!term) {
        err(
          "variable",
          r.variable
            ? `${r.variable} is not a term of this model.`
            : "Choose the term whose coefficient was printed.",
        );
        return;
      }
      const levels = (m.columns.get(term.variable)?.levels ?? []).map((l) => l.value);
      if (term.categorical && !r.level)
        err("level", `${term.variable} is categorical: give the level whose coefficient was printed.`);
      else if (term.categorical && levels.length > 0 && !levels.includes(r.level))
        err("level", `${term.variable} has no value "${r.level}"; its values are ${levels.join(", ")}.`);
      else if (!term.categorical && r.level)
        err("level", `${term.variable} is continuous: leave the level empty.`);
      candidate = {
        quantity: "coefficient",
        term: [{ variable: term.variable, ...(term.categorical && r.level ? { level: r.level } : {}) }],
        statistic: r.statistic,
        value: r.value,
      };
    } else {
      err("quantity", "Choose what was printed: a treatment contrast, an adjusted mean or a coefficient.");
      return;
    }
    if (Object.keys(errors).some((k) => k.startsWith(`published:${i}:`))) return;
    const parsed = publishedValueSchema.safeParse(candidate);
    if (!parsed.success) {
      const issue = parsed.error.issues[0];
      err(issue.path[0] === "value" ? "value" : "quantity", issue.message);
      return;
    }
    out.push(parsed.data);
  });
  return out;
}
