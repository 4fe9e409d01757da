import { z } from "zod";

/**
 * Values a clinical study report printed for a planned model, which a rerun must reproduce
 * (reproduction.ts compares them). Each names one quantity of the model's result and keeps the
 * value as printed text, so the number of decimals printed is known: "-2.35", "0.041", "<0.001".
 */

/** Which number of a quantity was printed: the estimate, its SE, a 95% CI bound, or the p-value. */
export const PUBLISHED_STATISTICS = ["estimate", "se", "lower", "upper", "p"] as const;
export type PublishedStatistic = (typeof PUBLISHED_STATISTICS)[number];

/** The measure of a marginal treatment contrast of a generalized linear model. */
export const CONTRAST_MEASURES = ["risk difference", "risk ratio", "odds ratio", "rate ratio"] as const;

/**
 * A printed number: an optional sign (a typographic minus too), digits with an optional decimal
 * part; or a p-value bound such as "<0.001" or ">0.999".
 */
export const PRINTED_NUMBER = /^(?:[<>]\s*)?[-−+]?(?:\d+(?:\.\d*)?|\.\d+)$/;

const printedValue = z
  .string()
  .trim()
  .regex(
    PRINTED_NUMBER,
    "Write the value as printed, e.g. -2.35, 0.041 or <0.001 (digits with a decimal point; no exponent or thousands separator).",
  );

/** One part of a coefficient's term: a continuous variable, or a level of a categorical one. */
export const coefficientPartSchema = z
  .object({ variable: z.string().min(1), level: z.string().min(1).optional() })
  .strict();

export const publishedValueSchema = z
  .discriminatedUnion("quantity", [
    z
      .object({
        quantity: z.literal("contrast"),
        /** The arm compared. */
        level: z.string().min(1),
        /** The arm it is compared with; the plan's reference arm when absent. */
        reference: z.string().min(1).optional(),
        /** Generalized linear models report several measures per contrast: name the one printed. */
        measure: z.enum(CONTRAST_MEASURES).optional(),
        statistic: z.enum(PUBLISHED_STATISTICS),
        value: printedValue,
      })
      .strict(),
    z
      .object({
        quantity: z.literal("mean"),
        /** The arm whose adjusted (or, for a generalized linear model, standardized) mean was printed. */
        level: z.string().min(1),
        statistic: z.enum(["estimate", "se", "lower", "upper"]),
        value: printedValue,
      })
      .strict(),
    z
      .object({
        quantity: z.literal("coefficient"),
        /** The term by its parts: one for a main term, two or three for an interaction, in the plan's order. */
        term: z.array(coefficientPartSchema).min(1).max(3),
        statistic: z.enum(PUBLISHED_STATISTICS),
        value: printedValue,
      })
      .strict(),
  ])
  .superRefine((v, ctx) => {
    if (v.statistic !== "p" && /^\s*[<>]/.test(v.value))
      ctx.addIssue({
        code: "custom",
        path: ["value"],
        message: `Only a p-value may be printed as a bound ("<0.001"); give the ${v.statistic === "se" ? "SE" : v.statistic} as printed.`,
      });
  });

export type PublishedValue = z.infer<typeof publishedValueSchema>;
export type PublishedQuantity = PublishedValue["quantity"];

export const QUANTITY_WORDS: Record<PublishedQuantity, string> = {
  contrast: "Treatment contrast",
  mean: "Adjusted mean",
  coefficient: "Coefficient",
};

export const STATISTIC_WORDS: Record<PublishedStatistic, string> = {
  estimate: "estimate",
  se: "SE",
  lower: "lower 95% CI bound",
  upper: "upper 95% CI bound",
  p: "p-value",
};

/** The quantity in reviewers' words, e.g. "contrast High vs Placebo", "coefficient BASE". */
export function describePublished(v: PublishedValue, reference?: string): string {
  switch (v.quantity) {
    case "contrast":
      return `contrast ${v.level} vs ${v.reference ?? reference ?? "the reference arm"}${v.measure ? ` (${v.measure})` : ""}`;
    case "mean":
      return `adjusted mean ${v.level}`;
    case "coefficient":
      return `coefficient ${v.term.map((p) => (p.level === undefined ? p.variable : `${p.variable}: ${p.level}`)).join(" × ")}`;
  }
}

/** One published value in reviewers' words: "contrast High vs Placebo, estimate printed as -2.35". */
export function publishedInWords(v: PublishedValue, reference?: string): string {
  return `${describePublished(v, reference)}, ${STATISTIC_WORDS[v.statistic]} printed as ${v.value}`;
}
