/**
 * What a results page shows of a stored rerun: tables and check outcomes, without the
 * observation-level arrays (the figures fetch those from their own resource route). Subject
 * ids are kept only for people who may see subject-level data; others get ranks and counts.
 */
import type { CheckOutcome } from "~/engine/checks";
import type { RerunDocument } from "./reruns.server";

export interface ContrastView {
  label: string;
  estimate: number;
  se: number;
  lower: number;
  upper: number;
  p: number;
  hc3: { se: number; lower: number; upper: number; p: number };
}

export function contrastsOf(doc: RerunDocument): ContrastView[] {
  return (doc.result.contrasts ?? []).map((c) => ({
    label: c.label,
    estimate: c.estimate,
    se: c.se,
    lower: c.lower,
    upper: c.upper,
    p: c.p,
    hc3: { se: c.hc3.se, lower: c.hc3.lower, upper: c.hc3.upper, p: c.hc3.p },
  }));
}

/** The contrast interval an analysis reports: HC3 for the robust-errors analysis, model-based otherwise. */
export function reportedContrasts(doc: RerunDocument): { label: string; estimate: number; lower: number; upper: number; p: number }[] {
  const robust = doc.options.variant === "robust_hc3";
  return contrastsOf(doc).map((c) => ({ label: c.label, estimate: c.estimate, ...(robust ? { lower: c.hc3.lower, upper: c.hc3.upper, p: c.hc3.p } : { lower: c.lower, upper: c.upper, p: c.p }) }));
}

export function checkView(c: CheckOutcome, withSubjectIds: boolean) {
  return {
    ...c,
    flagged: (c.flagged ?? []).slice(0, 5).map((f) => ({ rank: f.rank, value: f.value, who: withSubjectIds ? (f.id ?? `row ${f.row}`) : `subject ranked ${f.rank}` })),
    flaggedCount: c.flagged?.length ?? 0,
  };
}

export function rerunView(doc: RerunDocument, withSubjectIds: boolean) {
  const r = doc.result;
  return {
    description: doc.description,
    rows: doc.rows,
    population: doc.population,
    method: r.method.description,
    n: r.n,
    rank: r.rank,
    dfResidual: r.dfResidual,
    covarianceType: r.covarianceType,
    coefficients: r.coefficients,
    fit: r.fit,
    adjustedMeans: r.adjustedMeans,
    adjustedMeansWeighting: r.adjustedMeansWeighting,
    contrasts: contrastsOf(doc),
    tests: r.tests,
    vif: r.vif,
    qqShape: r.qqShape,
    terms: r.terms,
    continuousTerms: r.variables.filter((v) => v.kind === "continuous" && v.name !== r.spec.response).map((v) => v.name),
    checks: doc.checks.map((c) => checkView(c, withSubjectIds)),
    engineVersion: doc.engineVersion,
    caution: doc.caution,
  };
}

export type RerunView = ReturnType<typeof rerunView>;
