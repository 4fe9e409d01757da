/**
 * The reproduction check: does the rerun reproduce the values a clinical study report printed,
 * at the decimals printed? Each published value is compared with the rerun's value rounded to
 * the same number of decimals, half away from zero; a printed p bound ("<0.001") is reproduced
 * when the rerun's p is below it (">0.999": above it). The check is reproduced when every value
 * is; otherwise it is a finding, assessed like any other. Pure: no I/O.
 */
import Decimal from "decimal.js";
import { termVariables } from "./design";
import type { GlmResult } from "./glm/glm-model";
import type { LinearModelResult } from "./linear-model";
import { describePublished, type PublishedValue } from "./published-values";
import { interactionName, levelName } from "./coefficient-names";
import type { RepeatedResult } from "./repeated/repeated-model";

type ModelResult = LinearModelResult | GlmResult;

/** Significant digits of the rerun's value that the rounding reads (see `roundHalfAwayFromZero`). */
export const SIGNIFICANT_DIGITS = 15;

export const ROUNDING_RULE =
  `The rerun's value, taken to ${SIGNIFICANT_DIGITS} significant digits, is rounded to the decimals printed, half away from zero (2.345 → 2.35, −2.345 → −2.35); ` +
  `a printed bound such as "<0.001" is reproduced when the rerun's p is below it.`;

/**
 * Rounds to `decimals` places, half away from zero, as text with exactly that many decimals.
 * The value is first taken to 15 significant digits, the most a double carries for every
 * decimal: arithmetic leaves 2.345 as 2.34499999999999997 or 1.005 as 1.00499999999999989, and
 * rounding those binary values (as Number.prototype.toFixed does: (1.005).toFixed(2) is "1.00")
 * would turn a printed half-way value into a spurious mismatch. decimal.js does the decimal
 * rounding (ROUND_HALF_UP is half away from zero in its terms).
 */
export function roundHalfAwayFromZero(x: number, decimals: number): string {
  const text = new Decimal(x.toPrecision(SIGNIFICANT_DIGITS)).toFixed(decimals, Decimal.ROUND_HALF_UP);
  return /^-0(?:\.0*)?$/.test(text) ? text.slice(1) : text; // no "-0.00"
}

export interface PrintedNumber {
  /** "<" or ">" for a printed bound (p-values), null for a value. */
  readonly bound: "<" | ">" | null;
  /** The number as plain decimal text ("-2.35", "0.001"): typographic minus and spaces removed. */
  readonly number: string;
  readonly decimals: number;
}

/** Reads printed text such as "-2.35", "−2.35", ".041", "< 0.001"; null when it is not a printed number. */
export function parsePrinted(text: string): PrintedNumber | null {
  const m = /^\s*([<>])?\s*([-−+]?)(\d*)(?:\.(\d*))?\s*$/.exec(text);
  if (!m || (m[3] === "" && (m[4] ?? "") === "")) return null;
  const sign = m[2] === "-" || m[2] === "−" ? "-" : "";
  const decimals = (m[4] ?? "").length;
  const number = `${sign}${m[3] || "0"}${decimals > 0 ? `.${m[4]}` : ""}`;
  return { bound: (m[1] as "<" | ">" | undefined) ?? null, number, decimals };
}

export type ReproductionOutcome = "reproduced" | "not_reproduced";

/** One published value against the rerun. */
export interface ReproducedValue {
  readonly published: PublishedValue;
  /** The quantity in words, naming the rerun's coefficient or contrast where it was found. */
  readonly quantity: string;
  readonly printed: string;
  readonly decimals: number;
  /** The rerun's value as computed; null when the rerun has no such quantity. */
  readonly rerunValue: number | null;
  /** The rerun's value rounded as printed ("-2.35"), or for a bound the rerun's p to 4 significant digits. */
  readonly rerunRounded: string | null;
  readonly outcome: ReproductionOutcome;
  /** Why, in words: "rounds to -2.35", "rounds to -2.36, printed -2.35", "no contrast High vs Placebo in the rerun". */
  readonly reason: string;
}

export interface ReproductionResult {
  readonly outcome: ReproductionOutcome;
  readonly rule: string;
  readonly values: readonly ReproducedValue[];
}

/** Compares one printed value with the rerun's value. */
export function compareToPrinted(
  printedText: string,
  rerunValue: number,
): { outcome: ReproductionOutcome; rounded: string; reason: string } {
  const printed = parsePrinted(printedText);
  if (!printed)
    return { outcome: "not_reproduced", rounded: "", reason: `"${printedText}" is not a printed number` };
  if (!Number.isFinite(rerunValue))
    return { outcome: "not_reproduced", rounded: "—", reason: "the rerun could not compute this value" };
  if (printed.bound) {
    const limit = new Decimal(printed.number);
    const ok =
      printed.bound === "<"
        ? limit.gt(rerunValue.toPrecision(SIGNIFICANT_DIGITS))
        : limit.lt(rerunValue.toPrecision(SIGNIFICANT_DIGITS));
    const shown = Number(rerunValue.toPrecision(4)).toString();
    return {
      outcome: ok ? "reproduced" : "not_reproduced",
      rounded: shown,
      reason: `the rerun's value ${shown} is ${ok ? "" : "not "}${printed.bound === "<" ? "below" : "above"} ${printed.number}`,
    };
  }
  const rounded = roundHalfAwayFromZero(rerunValue, printed.decimals);
  const ok = new Decimal(rounded).eq(printed.number);
  return {
    outcome: ok ? "reproduced" : "not_reproduced",
    rounded,
    reason: ok ? `rounds to ${rounded}` : `rounds to ${rounded}, printed ${printed.number}`,
  };
}

type Found = { value: number; name: string } | { missing: string };

const STAT_OF = { estimate: "estimate", se: "se", lower: "lower", upper: "upper", p: "p" } as const;

function treatmentReference(r: ModelResult): string | undefined {
  return r.variables.find((v) => v.name === r.spec.treatment)?.reference;
}

function contrastOf(r: ModelResult, v: Extract<PublishedValue, { quantity: "contrast" }>): Found {
  const reference = v.reference ?? treatmentReference(r);
  const what = describePublished(v, reference);
  if (r.kind === "linear") {
    if (v.measure)
      return {
        missing: `${what}: a measure applies to generalized linear models; a linear model's contrast is a difference in adjusted means`,
      };
    const c = (r.contrasts ?? []).find((x) => x.level === v.level && x.reference === reference);
    return c
      ? { value: c[STAT_OF[v.statistic]], name: c.label }
      : { missing: `the rerun reports no ${what}` };
  }
  const all = (r.marginalEffects?.contrasts ?? []).filter(
    (x) => x.level === v.level && x.reference === reference,
  );
  if (!v.measure)
    return {
      missing: `${what}: name the measure printed (${[...new Set(all.map((x) => x.measure))].join(", ") || "the rerun reports none"})`,
    };
  const c = all.find((x) => x.measure === v.measure);
  return c
    ? { value: c[STAT_OF[v.statistic]], name: `${c.level} vs ${c.reference} (${c.measure})` }
    : { missing: `the rerun reports no ${what}` };
}

function meanOf(r: ModelResult, v: Extract<PublishedValue, { quantity: "mean" }>): Found {
  const rows = r.kind === "linear" ? (r.adjustedMeans ?? []) : (r.marginalEffects?.means ?? []);
  const m = rows.find((x) => x.level === v.level);
  return m
    ? { value: m[v.statistic], name: `${r.kind === "linear" ? "adjusted" : "standardized"} mean ${m.level}` }
    : { missing: `the rerun reports no ${describePublished(v)}` };
}

/**
 * The coefficient of a term by its structure, not by its printed name: the term whose variables
 * are the parts' variables, then the column of the parts' levels. A term's columns list the
 * non-reference levels of each categorical part in level order, the first part varying fastest
 * (design.ts, `termColumns`).
 */
function coefficientOf(r: ModelResult, v: Extract<PublishedValue, { quantity: "coefficient" }>): Found {
  const what = describePublished(v);
  const wanted = v.term.map((p) => p.variable);
  const k = termVariables(r.spec).findIndex(
    (vars) => vars.length === wanted.length && vars.every((x) => wanted.includes(x)),
  );
  if (k < 0) return { missing: `the model has no term ${wanted.join(" × ")}` };
  let index = 0;
  let stride = 1;
  for (const variable of termVariables(r.spec)[k]) {
    const part = v.term.find((p) => p.variable === variable)!;
    const summary = r.variables.find((x) => x.name === variable);
    if (summary?.kind === "categorical") {
      const levels = (summary.levels ?? []).filter((l) => l !== summary.reference);
      if (part.level === undefined)
        return { missing: `${what}: ${variable} is categorical, name its level (${levels.join(", ")})` };
      const at = levels.indexOf(part.level);
      if (at < 0)
        return {
          missing: `${what}: ${variable} has no coefficient for "${part.level}" (${part.level === summary.reference ? "it is the reference level" : `its levels are ${levels.join(", ")}`})`,
        };
      index += at * stride;
      stride *= levels.length;
    } else if (part.level !== undefined)
      return { missing: `${what}: ${variable} is continuous and has no levels` };
  }
  const name = r.terms[k]?.coefficients[index];
  const row = r.coefficients.find((c) => c.name === name);
  return row
    ? { value: row[STAT_OF[v.statistic]], name: `coefficient ${row.name}` }
    : { missing: `the rerun has no estimate for ${what}` };
}

/** The treatment's reference arm of a repeated-measures fit: the plan's, else the one its contrasts use. */
function repeatedReference(r: RepeatedResult): string | undefined {
  const term = r.spec.terms.find((t) => "variable" in t && t.variable === r.spec.treatment);
  return (term && "reference" in term && term.reference) || r.adjustedMeans?.contrasts[0]?.reference;
}

/**
 * A published value of a repeated-measures (MMRM) fit. A study report prints the contrast and the
 * adjusted means at the primary visit, so a contrast or mean is the one at `influence.primaryVisit`
 * (the plan's primary visit, else the last); a coefficient is found by its term's variables, its
 * name built from the parts in the term's order (coefficient-names.ts).
 */
function repeatedValueOf(r: RepeatedResult, v: PublishedValue): Found {
  const visit = r.influence.primaryVisit;
  const am = r.adjustedMeans;
  switch (v.quantity) {
    case "contrast": {
      const reference = v.reference ?? repeatedReference(r);
      const what = `${describePublished(v, reference)} at ${visit}`;
      if (v.measure)
        return {
          missing: `${what}: a measure applies to generalized linear models; a repeated-measures contrast is a difference in adjusted means`,
        };
      const c = am?.contrasts.find(
        (x) => x.level === v.level && x.reference === reference && x.visit === visit,
      );
      return c
        ? { value: c[STAT_OF[v.statistic]], name: `${c.label} at ${visit}` }
        : { missing: `the rerun reports no ${what}` };
    }
    case "mean": {
      const m = am?.means.find((x) => x.level === v.level && x.visit === visit);
      return m
        ? { value: m[v.statistic], name: `adjusted mean ${m.level} at ${visit}` }
        : { missing: `the rerun reports no ${describePublished(v)} at ${visit}` };
    }
    case "coefficient": {
      const what = describePublished(v);
      const wanted = v.term.map((p) => p.variable);
      const term = termVariables(r.spec).find(
        (vars) => vars.length === wanted.length && vars.every((x) => wanted.includes(x)),
      );
      if (!term) return { missing: `the model has no term ${wanted.join(" × ")}` };
      const name = interactionName(
        term.map((variable) => {
          const part = v.term.find((p) => p.variable === variable)!;
          return part.level === undefined ? variable : levelName(variable, part.level);
        }),
      );
      const row = r.coefficients.find((c) => c.name === name);
      return row
        ? { value: row[STAT_OF[v.statistic]], name: `coefficient ${row.name}` }
        : { missing: `the rerun has no estimate for ${what}` };
    }
  }
}

function valueOf(r: ModelResult | RepeatedResult, v: PublishedValue): Found {
  if (r.kind === "repeated") return repeatedValueOf(r, v);
  switch (v.quantity) {
    case "contrast":
      return contrastOf(r, v);
    case "mean":
      return meanOf(r, v);
    case "coefficient":
      return coefficientOf(r, v);
  }
}

/** Compares every published value with the rerun's result. */
export function checkReproduction(
  r: ModelResult | RepeatedResult,
  published: readonly PublishedValue[],
): ReproductionResult {
  const reference = r.kind === "repeated" ? repeatedReference(r) : treatmentReference(r);
  const values = published.map((v): ReproducedValue => {
    const found = valueOf(r, v);
    const decimals = parsePrinted(v.value)?.decimals ?? 0;
    if ("missing" in found) {
      return {
        published: v,
        quantity: describePublished(v, reference),
        printed: v.value,
        decimals,
        rerunValue: null,
        rerunRounded: null,
        outcome: "not_reproduced",
        reason: found.missing,
      };
    }
    const c = compareToPrinted(v.value, found.value);
    return {
      published: v,
      quantity: `${found.name}, ${v.statistic === "estimate" ? "estimate" : v.statistic === "se" ? "SE" : v.statistic === "p" ? "p" : `${v.statistic} 95% CI bound`}`,
      printed: v.value,
      decimals,
      rerunValue: Number.isFinite(found.value) ? found.value : null,
      rerunRounded: c.rounded,
      outcome: c.outcome,
      reason: c.reason,
    };
  });
  return {
    outcome: values.every((x) => x.outcome === "reproduced") ? "reproduced" : "not_reproduced",
    rule: ROUNDING_RULE,
    values,
  };
}

export const REPRODUCTION_CHECK_LABEL = "Reproduction of the published values";

/**
 * The reproduction check in the shape of the other checks' outcomes (key "reproduction"): within
 * plan when every value is reproduced, a finding otherwise.
 */
export function reproductionAsCheck(rep: ReproductionResult) {
  const failed = rep.values.filter((v) => v.outcome !== "reproduced");
  return {
    key: "reproduction" as const,
    label: REPRODUCTION_CHECK_LABEL,
    outcome: failed.length === 0 ? ("within" as const) : ("finding" as const),
    statistic: `${rep.values.length - failed.length} of ${rep.values.length} published values reproduced`,
    threshold: "every value at its printed decimals, half away from zero",
    summary:
      failed.length === 0
        ? "The rerun reproduces every published value at the decimals printed."
        : `Not reproduced: ${failed.map((v) => `${v.quantity} printed ${v.printed} (${v.reason})`).join("; ")}.`,
    remedy:
      "Compare the published analysis program with the plan (population, coding, covariates, weighting) and correct the report or record why it differs",
  };
}
