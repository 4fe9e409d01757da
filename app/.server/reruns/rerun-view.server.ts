/**
 * What a results page shows of a stored rerun: tables and check outcomes, without the
 * observation-level arrays (the figures fetch those from their own resource route). Texts and
 * flagged subjects go through the viewer's redaction (redaction.server.ts): subject ids only for
 * people who may see subject-level data, ranks and counts for the others.
 */
import type { CheckOutcome } from "~/engine/checks";
import type { Redaction } from "../redaction.server";
import type { RerunDocument } from "./reruns.server";
import { coxReportedContrasts, coxRerunView, restrictedMeanContrasts } from "./cox-rerun-view.server";

export interface ContrastView {
  label: string;
  estimate: number;
  se: number;
  lower: number;
  upper: number;
  p: number;
  /** Null where the robust alternative does not apply (Ye et al. for a non-canonical GLM). */
  hc3: { se: number; lower: number; upper: number; p: number } | null;
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
  if (r.kind === "linear") {
    return (r.contrasts ?? []).map((c) => ({
      label: c.label,
      estimate: c.estimate,
      se: c.se,
      lower: c.lower,
      upper: c.upper,
      p: c.p,
      hc3: { se: c.hc3.se, lower: c.hc3.lower, upper: c.hc3.upper, p: c.hc3.p },
    }));
  }
  return (r.marginalEffects?.contrasts ?? []).map((c) => ({
    label: `${c.level} vs ${c.reference} (${c.measure})`,
    estimate: c.estimate,
    se: c.se,
    lower: c.lower,
    upper: c.upper,
    p: c.p,
    hc3: c.robust ? { se: c.robust.se, lower: c.robust.lower, upper: c.robust.upper, p: c.robust.p } : null,
  }));
}

/**
 * The contrast interval an analysis reports: HC3 for the robust-errors analysis, model-based
 * otherwise. For binary endpoints the risk difference is the headline measure.
 */
export function reportedContrasts(doc: RerunDocument): { label: string; estimate: number; lower: number; upper: number; p: number }[] {
  if (doc.result.kind === "cox") return doc.restrictedMean ? restrictedMeanContrasts(doc.restrictedMean) : coxReportedContrasts(doc.result);
  const robust = doc.options.variant === "robust_hc3";
  const all = contrastsOf(doc);
  const headline = doc.result.kind === "glm" && doc.result.family === "binomial" ? all.filter((c) => c.label.endsWith("(risk difference)")) : all;
  return headline.map((c) => ({ label: c.label, estimate: c.estimate, ...(robust && c.hc3 ? { lower: c.hc3.lower, upper: c.hc3.upper, p: c.hc3.p } : { lower: c.lower, upper: c.upper, p: c.p }) }));
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
  };
}

export function rerunView(doc: RerunDocument, redact: Redaction) {
  if (doc.result.kind === "cox") return coxRerunView(doc, doc.result, redact);
  const r = doc.result;
  const common = {
    description: redact.text(doc.description),
    rows: doc.rows,
    population: doc.population,
    method: r.method.description,
    family: r.family,
    link: r.link,
    n: r.n,
    rank: r.rank,
    dfResidual: r.dfResidual,
    coefficients: r.coefficients,
    contrasts: contrastsOf(doc),
    vif: r.vif,
    qqShape: r.qqShape,
    terms: r.terms,
    continuousTerms: r.variables.filter((v) => v.kind === "continuous" && v.name !== r.spec.response).map((v) => v.name),
    checks: doc.checks.map((c) => checkView(c, redact)),
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
