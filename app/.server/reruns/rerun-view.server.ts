/**
 * What a results page shows of a stored rerun: tables and check outcomes, without the
 * observation-level arrays (the figures fetch those from their own resource route). Texts and
 * flagged subjects go through the viewer's redaction (redaction.server.ts): subject ids only for
 * people who may see subject-level data, ranks and counts for the others.
 */
import { populationStepsOf } from "./rerun-population";
import type { TreatmentEffectPlan } from "~/components/treatment-effect";
import { reproductionAsCheck } from "~/engine/reproduction";
import { CHECK_BY_KEY, type CheckOutcome } from "~/engine/checks";
import { familyWithLink } from "~/engine/family-names";
import { fitFactsOf, fitStatisticRows } from "~/components/fit-statistics";
import { figureModule, figureOfCheck } from "~/figures/registry";
import type { Redaction } from "../redaction.server";
import type { RerunDocument } from "./reruns.server";
import { coxReportedContrasts, coxRerunView, restrictedMeanContrasts } from "./cox-rerun-view.server";
import { repeatedRerunView } from "./repeated-rerun-view.server";

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

/** The plan's contrast set and multiplicity method, and the overall test of the treatment term. */
export function treatmentEffectOf(doc: RerunDocument): TreatmentEffectPlan {
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

/**
 * The treatment contrasts a rerun reports: differences in adjusted means for a linear model
 * (with HC3 beside them), marginal (standardized) contrasts for a GLM (with the variance of
 * Ye et al. 2023 beside them, in the same "hc3" slot: the robust alternative).
 */
export function contrastsOf(doc: RerunDocument): ContrastView[] {
  const r = doc.result;
  // a Cox model reports hazard ratios instead (coxRerunView, coxReportedContrasts)
  if (r.kind === "cox") return [];
  // a repeated-measures model reports its contrasts at the primary visit (no HC3 beside them)
  if (r.kind === "repeated") {
    return (r.adjustedMeans?.contrasts ?? [])
      .filter((c) => c.visit === r.influence.primaryVisit)
      .map((c) => ({
        label: `${c.label}, ${c.visit}`,
        estimate: c.estimate,
        se: c.se,
        lower: c.lower,
        upper: c.upper,
        statistic: c.statistic,
        p: c.p,
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
  doc: RerunDocument,
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

/** A check as a results page shows it: texts and flagged subjects through the viewer's redaction. */
export function checkView(c: CheckOutcome, redact: Redaction) {
  return {
    ...c,
    statistic: redact.text(c.statistic, c.key),
    summary: redact.text(c.summary, c.key),
    remedy: redact.text(c.remedy, c.key),
    flagged: redact.flagged(c),
    flaggedCount: c.flagged?.length ?? 0,
    // the figure's module decides which check it supports; a check not computed has none
    figure: figureOfCheck(c),
    formula: CHECK_BY_KEY.get(c.key)?.formula ?? null,
  };
}

/** The reproduction check as the results page shows it (reproduction-results.tsx); null when the plan gives no published values. */
export function reproductionView(doc: RerunDocument) {
  if (!doc.reproduction) return null;
  const check = reproductionAsCheck(doc.reproduction);
  return {
    outcome: doc.reproduction.outcome,
    rule: doc.reproduction.rule,
    label: check.label,
    statistic: check.statistic,
    checkOutcome: check.outcome,
    values: doc.reproduction.values.map(({ published: _published, ...v }) => v),
  };
}

export function rerunView(doc: RerunDocument, redact: Redaction) {
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
