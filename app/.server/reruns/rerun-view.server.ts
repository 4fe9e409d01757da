/**
 * What a results page shows of a stored rerun: tables and check outcomes, without the
 * observation-level arrays (the figures fetch those from their own resource route). Texts and
 * flagged subjects go through the viewer's redaction (redaction.server.ts): subject ids only for
 * people who may see subject-level data, ranks and counts for the others.
 */
import { plannedVisitContrasts } from "~/engine/repeated/repeated-model";
import { populationStepsOf } from "./rerun-population";
import { familyWithLink } from "~/engine/family-names";
import { fitFactsOf, fitStatisticRows } from "~/components/fit-statistics";
import { figureModule } from "~/figures/registry";
import { checkView, reproductionView } from "./check-view.server";
import { treatmentEffectOf } from "./treatment-effect-of";
import type { Redaction } from "../redaction.server";
import type { ViewDocument } from "./page-document";
import { coxReportedContrasts, coxRerunView, restrictedMeanContrasts } from "./cox-rerun-view.server";
import { repeatedRerunView } from "./repeated-rerun-view.server";

// said once in their own modules (so the views of other model types import them without a cycle), read here as before
export { checkView, reproductionView, treatmentEffectOf };

export interface ContrastView {
  label: string;
  estimate: number;
  se: number;
  lower: number;
  upper: number;
  statistic: number;
  p: number;
  /** p adjusted for multiplicity (absent without a method). */
  pAdjusted?: number;
  /** Null where the robust alternative does not apply (Ye et al. for a non-canonical GLM). */
  hc3: { se: number; lower: number; upper: number; statistic: number; p: number; pAdjusted?: number } | null;
  /** "log" for a ratio: its SEs are those of the log ratio (the estimate and interval are ratios). */
  seScale: "response" | "log";
}

/**
 * The treatment contrasts a rerun reports: differences in adjusted means for a linear model
 * (with HC3 beside them), marginal (standardized) contrasts for a GLM (with the variance of
 * Ye et al. 2023 beside them, in the same "hc3" slot: the robust alternative).
 */
export function contrastsOf(doc: ViewDocument): ContrastView[] {
  const r = doc.result;
  // a Cox model reports hazard ratios instead (coxRerunView, coxReportedContrasts)
  if (r.kind === "cox") return [];
  // a repeated-measures model reports its contrasts at the primary visit (no HC3 beside them)
  if (r.kind === "repeated") {
    return plannedVisitContrasts(r)
      .filter((c) => c.visit === r.influence.primaryVisit)
      .map((c) => ({
        label: `${c.label}, ${c.visit}`,
        estimate: c.estimate,
        se: c.se,
        lower: c.lower,
        upper: c.upper,
        statistic: c.statistic,
        p: c.p,
        ...(c.pAdjusted !== undefined ? { pAdjusted: c.pAdjusted } : {}),
        hc3: null,
        seScale: "response" as const,
      }));
  }
  if (r.kind === "linear") {
    return (r.contrasts ?? []).map((c) => ({
      label: c.label,
      estimate: c.estimate,
      se: c.se,
      lower: c.lower,
      upper: c.upper,
      statistic: c.statistic,
      p: c.p,
      ...(c.pAdjusted !== undefined ? { pAdjusted: c.pAdjusted } : {}),
      hc3: {
        se: c.hc3.se,
        lower: c.hc3.lower,
        upper: c.hc3.upper,
        statistic: c.hc3.statistic,
        p: c.hc3.p,
        ...(c.hc3.pAdjusted !== undefined ? { pAdjusted: c.hc3.pAdjusted } : {}),
      },
      seScale: "response" as const,
    }));
  }
  return (r.marginalEffects?.contrasts ?? []).map((c) => ({
    label: `${c.level} vs ${c.reference} (${c.measure})`,
    estimate: c.estimate,
    se: c.se,
    lower: c.lower,
    upper: c.upper,
    statistic: c.statistic,
    p: c.p,
    ...(c.pAdjusted !== undefined ? { pAdjusted: c.pAdjusted } : {}),
    hc3: c.robust
      ? {
          se: c.robust.se,
          lower: c.robust.lower,
          upper: c.robust.upper,
          statistic: c.robust.statistic,
          p: c.robust.p,
          ...(c.robust.pAdjusted !== undefined ? { pAdjusted: c.robust.pAdjusted } : {}),
        }
      : null,
    seScale: c.measure === "risk difference" ? ("response" as const) : ("log" as const),
  }));
}

/**
 * The contrast interval an analysis reports: HC3 for the robust-errors analysis, model-based
 * otherwise. For binary endpoints the risk difference is the headline measure.
 */
export function reportedContrasts(
  doc: ViewDocument,
): { label: string; estimate: number; lower: number; upper: number; p: number }[] {
  if (doc.result.kind === "cox")
    return doc.restrictedMean
      ? restrictedMeanContrasts(doc.restrictedMean)
      : coxReportedContrasts(doc.result);
  const robust = doc.options.variant === "robust_hc3";
  const all = contrastsOf(doc);
  const headline =
    doc.result.kind === "glm" && doc.result.family === "binomial"
      ? all.filter((c) => c.label.endsWith("(risk difference)"))
      : all;
  return headline.map((c) => ({
    label: c.label,
    estimate: c.estimate,
    ...(robust && c.hc3
      ? { lower: c.hc3.lower, upper: c.hc3.upper, p: c.hc3.p }
      : { lower: c.lower, upper: c.upper, p: c.p }),
  }));
}

export function rerunView(doc: ViewDocument, redact: Redaction) {
  if (doc.result.kind === "cox") return coxRerunView(doc, doc.result, redact);
  if (doc.result.kind === "repeated") return repeatedRerunView(doc, doc.result, redact);
  const r = doc.result;
  const continuousTerms = r.variables
    .filter((v) => v.kind === "continuous" && v.name !== r.spec.response)
    .map((v) => v.name);
  const common = {
    description: redact.text(doc.description),
    rows: doc.rows,
    population: populationStepsOf(doc),
    method: r.method.description,
    family: r.family,
    link: r.link,
    /** "Normal (identity link)", "Binomial (logit link)". */
    familyLabel: familyWithLink(r.family, r.link),
    /** The fit statistics as labelled rows (fit-statistics.ts). */
    fitStatistics: fitStatisticRows(fitFactsOf(r)),
    n: r.n,
    rank: r.rank,
    dfResidual: r.dfResidual,
    coefficients: r.coefficients,
    contrasts: contrastsOf(doc),
    treatmentEffect: treatmentEffectOf(doc),
    vif: r.vif,
    qqShape: r.qqShape,
    terms: r.terms,
    continuousTerms,
    checks: doc.checks.map((c) => {
      const v = checkView(c, redact);
      // a figure drawn per covariate is shown with the covariate its module picks, or the first continuous one
      // (none when the model has no continuous covariate: then the check has no figure)
      const m = v.figure ? figureModule(v.figure) : null;
      if (m?.perTerm !== "continuous") return { ...v, figureTerm: undefined };
      const figureTerm =
        m.defaultTerm?.(doc) ?? continuousTerms.find((t) => t !== r.spec.offset && t !== r.spec.weights);
      return { ...v, figure: figureTerm ? v.figure : null, figureTerm };
    }),
    reproduction: reproductionView(doc),
    engineVersion: doc.engineVersion,
    caution: doc.caution,
  };
  if (r.kind === "linear") {
    return {
      ...common,
      kind: "linear" as const,
      statisticName: "t" as const,
      covarianceType: r.covarianceType,
      fit: r.fit,
      adjustedMeans: r.adjustedMeans,
      adjustedMeansWeighting: r.adjustedMeansWeighting,
      tests: r.tests,
    };
  }
  return {
    ...common,
    kind: "glm" as const,
    statisticName: r.statisticName,
    /** The robust-errors analysis reads the coefficients with the sandwich (HC3) covariance. */
    covarianceType: r.method.kind === "robust" ? "HC3" : "model",
    glmFit: r.fit,
    ratioName: r.ratioName,
    ratios: r.ratios,
    events: r.events,
    eventsPerVariable: r.eventsPerVariable,
    marginalMeans: r.marginalEffects?.means ?? null,
    /** Hosmer–Lemeshow groups of a binomial model (the calibration figure's table). */
    calibrationGroups: r.checks.calibration?.groups ?? null,
    notes: r.notes,
  };
}

export type RerunView = ReturnType<typeof rerunView>;
