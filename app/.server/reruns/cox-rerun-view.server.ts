/**
 * What a results page shows of a Cox rerun: coefficients (log hazard ratios), hazard ratios
 * with intervals, the model's tests, the proportional-hazards test per term and global, the
 * checks, and which figures to draw. No observation-level arrays; subject ids in check texts
 * only for people who may see subject-level data (checkView, as for the other kinds).
 */
import { populationStepsOf } from "./rerun-population";
import type { CoxResult } from "~/engine/survival/cox-model";
import type { RestrictedMeanDifference } from "~/engine/survival/rmst";
import type { Redaction } from "../redaction.server";
import { coxFigureList } from "~/figures/cox/cox-figure-data";
import { checkView } from "./rerun-view.server";
import type { ViewDocument } from "./page-document";

const TRANSFORM_WORDS = { km: "Kaplan–Meier", rank: "rank", identity: "time", log: "log time" } as const;

/** The tests of a Cox model against no covariate effect, named in words (page, report and appendix). */
export function coxModelTests(r: CoxResult): { name: string; statistic: number; df: number; p: number }[] {
  const t = r.tests;
  return [
    { name: "Likelihood-ratio test", ...t.likelihoodRatio },
    { name: r.robust ? "Wald test, robust (sandwich) covariance" : "Wald test", ...t.wald },
    { name: "Score test", ...t.score },
    ...(t.robustScore ? [{ name: "Score test, robust (sandwich) covariance", ...t.robustScore }] : []),
    ...(t.logRank
      ? [
          {
            name: r.strata.length ? "Log-rank test of the arms, stratified" : "Log-rank test of the arms",
            statistic: t.logRank.statistic,
            df: t.logRank.df,
            p: t.logRank.p,
          },
        ]
      : []),
  ];
}

export function coxRerunView(doc: ViewDocument, r: CoxResult, redact: Redaction) {
  const t = r.tests;
  return {
    kind: "cox" as const,
    description: doc.description,
    rows: doc.rows,
    population: populationStepsOf(doc),
    method: `Cox proportional hazards model by partial likelihood (${r.ties === "efron" ? "Efron" : "Breslow"} ties${r.strata.length ? `, stratified by ${r.spec.strata.join(", ")}` : ""}); Wald ${r.robust ? "robust (sandwich) " : ""}95% intervals.`,
    n: r.n,
    treatment: r.spec.treatment ?? null,
    strata: r.strata,
    robust: r.robust,
    coefficients: r.coefficients.map((c) => ({
      name: c.name,
      term: c.term,
      estimate: c.estimate,
      se: r.robust ? c.robustSe : c.se,
      statistic: c.statistic,
      p: c.p,
      lower: c.lower,
      upper: c.upper,
    })),
    ratios: r.ratios,
    fit: r.fit,
    tests: coxModelTests(r),
    proportionalHazards: {
      transform: TRANSFORM_WORDS[t.proportionalHazards.transform],
      rows: [
        ...t.proportionalHazards.terms.map((x) => ({
          term: x.term,
          statistic: x.statistic,
          df: x.df,
          p: x.p,
        })),
        { term: "Global", ...t.proportionalHazards.global },
      ],
    },
    notes: r.notes,
    restrictedMean: doc.restrictedMean ?? null,
    figures: coxFigureList(r),
    checks: doc.checks.map((c) => checkView(c, redact)),
    engineVersion: doc.engineVersion,
    caution: doc.caution,
  };
}

export type CoxRerunView = ReturnType<typeof coxRerunView>;

/** The treatment hazard ratios a Cox analysis reports (for the comparison of analyses). */
export function coxReportedContrasts(
  r: CoxResult,
): { label: string; estimate: number; lower: number; upper: number; p: number }[] {
  const t = r.spec.treatment;
  return r.coefficients.flatMap((c, j) =>
    c.term === t
      ? [
          {
            label: `${c.name} (hazard ratio)`,
            estimate: r.ratios[j].ratio,
            lower: r.ratios[j].lower,
            upper: r.ratios[j].upper,
            p: c.p,
          },
        ]
      : [],
  );
}

/** The restricted mean survival time differences of the restricted-mean analysis (for the comparison of analyses). */
export function restrictedMeanContrasts(
  rm: readonly RestrictedMeanDifference[],
): { label: string; estimate: number; lower: number; upper: number; p: number }[] {
  return rm.map((d) => ({
    label: `${d.level} vs ${d.reference} (restricted mean survival difference to τ = ${d.tau})`,
    estimate: d.difference,
    lower: d.lower,
    upper: d.upper,
    p: d.p,
  }));
}
