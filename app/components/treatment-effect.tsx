/**
 * The treatment effect's plan and overall test as the results page and report show them: which
 * contrasts were made, the multiplicity method, and the overall test of the treatment term
 * (F for a linear model, likelihood-ratio χ² for a generalized linear model).
 */
import { CONTRAST_SET_NAMES } from "~/engine/multiplicity";
import { fmt, fmtP } from "~/shared/format";

export type TreatmentTestView =
  | {
      readonly name: "F";
      readonly term: string;
      readonly statistic: number | null;
      readonly df1: number;
      readonly df2: number;
      readonly p: number | null;
      readonly reason?: string;
    }
  | {
      readonly name: "χ²";
      readonly term: string;
      readonly statistic: number | null;
      readonly df: number;
      readonly p: number | null;
      readonly reason?: string;
    };

export interface TreatmentEffectPlan {
  readonly contrastSet: "reference" | "pairwise";
  readonly multiplicity: "none" | "bonferroni" | "holm" | "hochberg";
  readonly test: TreatmentTestView | null;
}

export const MULTIPLICITY_WORDS: Record<TreatmentEffectPlan["multiplicity"], string> = {
  none: "none",
  bonferroni: "Bonferroni",
  holm: "Holm",
  hochberg: "Hochberg",
};

/** "Overall test of TRT01P: F = 9.884 on 2 and 103 df, p = 0.0001", or why there is none. */
export function treatmentTestWords(t: TreatmentTestView): string {
  if (t.statistic === null) return `No overall test of ${t.term}: ${t.reason ?? "not computed"}.`;
  const df = t.name === "F" ? `${t.df1} and ${t.df2} df` : `${t.df} df`;
  const p = fmtP(t.p);
  return `Overall test of ${t.term}: ${t.name === "F" ? "F" : "likelihood-ratio χ²"} = ${fmt(t.statistic)} on ${df}, p ${p.startsWith("<") ? p : `= ${p}`}.`;
}

export function TreatmentEffectNote({ plan }: { plan: TreatmentEffectPlan }) {
  return (
    <p className="num mt-2 text-sm">
      {plan.test ? treatmentTestWords(plan.test) : null} Contrasts: {CONTRAST_SET_NAMES[plan.contrastSet]}.
      Multiplicity adjustment:{" "}
      {plan.multiplicity === "none"
        ? "none (p-values unadjusted)"
        : `${MULTIPLICITY_WORDS[plan.multiplicity]}, adjusted p beside the unadjusted p`}
      .
    </p>
  );
}
