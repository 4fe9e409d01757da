/**
 * What a results page shows of a stored rerun: tables and check outcomes, without the
 * observation-level arrays (the figures fetch those from their own resource route). Subject
 * ids are kept only for people who may see subject-level data; others get ranks and counts.
 */
import type { CheckOutcome } from "~/engine/checks";
import type { RerunDocument } from "./reruns.server";
import { coxReportedContrasts, coxRerunView } from "./cox-rerun-view.server";

export interface ContrastView {
  label: string;
  estimate: number;
  se: number;
  lower: number;
  upper: number;
  p: number;
  hc3: { se: number; lower: number; upper: number; p: number };
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
    hc3: { se: c.robust.se, lower: c.robust.lower, upper: c.robust.upper, p: c.robust.p },
  }));
}

/**
 * The contrast interval an analysis reports: HC3 for the robust-errors analysis, model-based
 * otherwise. For binary endpoints the risk difference is the headline measure.
 */
export function reportedContrasts(doc: RerunDocument): { label: string; estimate: number; lower: number; upper: number; p: number }[] {
  if (doc.result.kind === "cox") return coxReportedContrasts(doc.result);
  const robust = doc.options.variant === "robust_hc3";
  const all = contrastsOf(doc);
  const headline = doc.result.kind === "glm" && doc.result.family === "binomial" ? all.filter((c) => c.label.endsWith("(risk difference)")) : all;
  return headline.map((c) => ({ label: c.label, estimate: c.estimate, ...(robust ? { lower: c.hc3.lower, upper: c.hc3.upper, p: c.hc3.p } : { lower: c.lower, upper: c.upper, p: c.p }) }));
}

/** Check texts name the most extreme subject; without the right to see subjects, they say "a subject". */
function redactSubjects(text: string, ids: ReadonlySet<string>): string {
  return text.replace(/subject (\S+?)(?=[),.;]|\s|$)/g, (whole, id: string) => (ids.has(id) ? "a subject" : whole));
}

/**
 * For texts stored without their rerun at hand (finding summaries in the deviation log): every
 * "subject <code>" our generated texts write becomes "a subject". Rationales people type are
 * theirs and are shown as written.
 */
export function withoutSubjectNames(text: string): string {
  return text.replace(/subject (\S*\d\S*?)(?=[),.;]|\s|$)/g, "a subject");
}

export function checkView(c: CheckOutcome, withSubjectIds: boolean, subjectIds: ReadonlySet<string> = new Set()) {
  const text = (t: string) => (withSubjectIds ? t : redactSubjects(t, subjectIds));
  return {
    ...c,
    statistic: text(c.statistic),
    summary: text(c.summary),
    flagged: (c.flagged ?? []).slice(0, 5).map((f) => ({ rank: f.rank, value: f.value, who: withSubjectIds ? (f.id ?? `row ${f.row}`) : `subject ranked ${f.rank}` })),
    flaggedCount: c.flagged?.length ?? 0,
  };
}

export function rerunView(doc: RerunDocument, withSubjectIds: boolean) {
  if (doc.result.kind === "cox") return coxRerunView(doc, doc.result, withSubjectIds);
  const r = doc.result;
  const subjectIds = new Set(r.observations.id.filter((id): id is string => id !== null));
  const common = {
    description: doc.description,
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
    checks: doc.checks.map((c) => checkView(c, withSubjectIds, subjectIds)),
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
