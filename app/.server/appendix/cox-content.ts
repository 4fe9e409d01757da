/**
 * The time-to-event (Cox) parts of the appendix and the sponsor report: the results tables
 * (log hazard ratios, hazard ratios, the model's tests, the proportional-hazards test), and
 * the words of each Cox figure for its caption and alt text. No subject ids. Pure.
 */
import type { Block } from "~/components/appendix-content";
import type { KaplanMeierData, LogMinusLogData } from "~/components/figures/cox";
import { fmt, fmtCi, fmtP } from "~/components/format";
import type { CoxResult } from "~/engine/survival/cox-model";
import { coxModelTests } from "../reruns/cox-rerun-view.server";

export const COX_FIGURE_WORDS = {
  kaplan_meier: {
    caption: "Kaplan–Meier curves by arm with numbers at risk",
    shows: "the proportion of subjects still free of the event over time in each arm, with 95% Greenwood bands and the numbers at risk below the axis",
    healthy: "curves that separate and stay apart without crossing",
    checks: ["events_per_coefficient"],
  },
  log_minus_log: {
    caption: "log(−log S) against log time by arm",
    shows: "the log of minus the log of each arm's Kaplan–Meier estimate against log time",
    healthy: "roughly parallel lines, a constant gap between arms",
    checks: ["proportional_hazards"],
  },
  schoenfeld: {
    caption: "Scaled Schoenfeld residuals against time",
    shows: "one point per event: the scaled Schoenfeld residual of the coefficient against the event time, with a loess smoother and the fitted log hazard ratio as a dashed line",
    healthy: "a smoother flat along the dashed line, no trend with time",
    checks: ["proportional_hazards"],
  },
  martingale_covariate: {
    caption: "Martingale residuals against the covariate",
    shows: "each subject's martingale residual against the covariate, with a loess smoother and a dashed line at zero",
    healthy: "a smoother flat around zero across the covariate's range",
    checks: ["functional_form_cox"],
  },
  cox_influence: {
    caption: "DFBETAS on the treatment log hazard ratio by subject",
    shows: "each subject's DFBETAS on the treatment coefficient in data order, with the planned threshold as dashed lines",
    healthy: "every subject inside the dashed lines",
    checks: ["dfbetas_treatment_cox"],
  },
};

/** The alt text's sentence on a survival-curve figure: the arms and the log-rank test. */
export function coxMarkedInWords(d: KaplanMeierData | LogMinusLogData): string {
  const arms = `${d.arms.length} arm${d.arms.length === 1 ? "" : "s"} (${d.arms.join(", ")})`;
  if (d.figure === "log_minus_log") return `${arms}.`;
  const t = d.logRank;
  return `${arms}. ${t ? `${t.stratified ? "Stratified log-rank" : "Log-rank"} χ² = ${fmt(t.statistic, 2)} on ${t.df} df, p ${t.p < 0.0001 ? "< 0.0001" : `= ${fmtP(t.p)}`}.` : ""}`.trim();
}

/** The results tables of a Cox rerun, numbered by `next`. */
export function coxResultBlocks(r: CoxResult, rerunId: string, modelTitle: string, next: { table: () => number }): Block[] {
  const se = r.robust ? "robust (sandwich)" : "model-based";
  const t = r.tests;
  const chi = (name: string, x: { statistic: number; df: number; p: number }) => [name, fmt(x.statistic, 2), String(x.df), fmtP(x.p)];
  return [
    {
      kind: "paragraph",
      text: `${r.n} subjects analysed with ${r.fit.events} events (${fmt(r.fit.eventsPerCoefficient, 1)} per estimated coefficient)${r.strata.length ? ` in ${r.strata.length} strata` : ""}; ${r.ties === "efron" ? "Efron" : "Breslow"} ties; concordance ${fmt(r.fit.concordance)}; partial log-likelihood ${fmt(r.fit.logLik, 2)} (null ${fmt(r.fit.logLikNull, 2)}).`,
    },
    ...r.notes.map((text): Block => ({ kind: "paragraph", text })),
    {
      kind: "table",
      key: `coefficients:${rerunId}`,
      number: next.table(),
      caption: `Estimated log hazard ratios and hazard ratios, ${modelTitle}`,
      columns: [{ label: "Coefficient" }, { label: "log HR", numeric: true }, { label: "SE", numeric: true }, { label: "z", numeric: true }, { label: "p", numeric: true }, { label: "Hazard ratio", numeric: true }, { label: "95% CI", numeric: true }],
      rows: r.coefficients.map((c, j) => [c.name, fmt(c.estimate), fmt(r.robust ? c.robustSe : c.se), fmt(c.statistic, 2), fmtP(c.p), fmt(r.ratios[j].ratio), fmtCi(r.ratios[j].lower, r.ratios[j].upper)]),
      note: `Wald z and 95% intervals on ${se} standard errors; hazard ratios are exp(log HR).`,
    },
    {
      kind: "table",
      key: `cox-tests:${rerunId}`,
      number: next.table(),
      caption: `Tests of the model and of proportional hazards, ${modelTitle}`,
      columns: [{ label: "Test" }, { label: "Statistic (χ²)", numeric: true }, { label: "Degrees of freedom", numeric: true }, { label: "p", numeric: true }],
      rows: [
        ...coxModelTests(r).map((x) => chi(x.name, x)),
        ...t.proportionalHazards.terms.map((x) => chi(`Proportional hazards: ${x.term}`, x)),
        chi("Proportional hazards: global", t.proportionalHazards.global),
      ],
      note: `Proportional-hazards tests: Grambsch and Therneau (1994) score test on the ${t.proportionalHazards.transform} time scale.`,
    },
  ];
}
