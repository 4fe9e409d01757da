/** What a rerun's treatment effect is, as the plan states it (shared by the views of every model type, the API and the appendix). */
import type { TreatmentEffectPlan } from "~/components/treatment-effect";
import type { ViewDocument } from "./page-document";

/** The plan's contrast set and multiplicity method, and the overall test of the treatment term. */
export function treatmentEffectOf(doc: ViewDocument): TreatmentEffectPlan {
  const r = doc.result;
  if (r.kind === "cox") return { contrastSet: "reference", multiplicity: "none", test: null };
  if (r.kind === "repeated") {
    const t = r.tests.treatment;
    return {
      contrastSet: r.spec.contrasts ?? "reference",
      multiplicity: r.spec.multiplicity ?? "none",
      test: t
        ? {
            name: "F",
            term: r.adjustedMeans?.treatment ?? r.spec.treatment ?? "treatment",
            statistic: t.statistic,
            df1: t.numeratorDf,
            df2: t.denominatorDf,
            p: t.p,
          }
        : null,
    };
  }
  const contrastSet = r.spec.contrasts ?? "reference";
  const multiplicity = r.spec.multiplicity ?? "none";
  if (r.kind === "linear") {
    const t = r.tests.treatment;
    return { contrastSet, multiplicity, test: t ? { name: "F", ...t } : null };
  }
  const t = r.checks.treatment;
  return { contrastSet, multiplicity, test: t ? { name: "χ²", ...t } : null };
}
