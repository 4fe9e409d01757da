/**
 * The time-to-event (Cox) parts of the appendix and the sponsor report: the results tables
 * (log hazard ratios, hazard ratios, the model's tests, the proportional-hazards test). The
 * words of each Cox figure live in its module (app/figures/cox/). No subject ids. Pure.
 */
import type { Block } from "~/shared/appendix-content";
import { fmt, fmtCi, fmtP } from "~/shared/format";
import type { CoxResult } from "~/engine/survival/cox-model";
import { coxModelTests } from "../reruns/cox-rerun-view.server";

/** The results tables of a Cox rerun, numbered by `next`. */
export function coxResultBlocks(
  r: CoxResult,
  rerunId: string,
  modelTitle: string,
  next: { table: () => number },
): Block[] {
  const se = r.robust ? "robust (sandwich)" : "model-based";
  const t = r.tests;
  const chi = (name: string, x: { statistic: number; df: number; p: number }) => [
    name,
    fmt(x.statistic, 2),
    String(x.df),
    fmtP(x.p),
  ];
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
      columns: [
        { label: "Coefficient" },
        { label: "log HR", numeric: true },
        { label: "SE", numeric: true },
        { label: "z", numeric: true },
        { label: "p", numeric: true },
        { label: "Hazard ratio", numeric: true },
        { label: "95% CI", numeric: true },
      ],
      rows: r.coefficients.map((c, j) => [
        c.name,
        fmt(c.estimate),
        fmt(r.robust ? c.robustSe : c.se),
        fmt(c.statistic, 2),
        fmtP(c.p),
        fmt(r.ratios[j].ratio),
        fmtCi(r.ratios[j].lower, r.ratios[j].upper),
      ]),
      note: `Wald z and 95% intervals on ${se} standard errors; hazard ratios are exp(log HR).`,
    },
    {
      kind: "table",
      key: `cox-tests:${rerunId}`,
      number: next.table(),
      caption: `Tests of the model and of proportional hazards, ${modelTitle}`,
      columns: [
        { label: "Test" },
        { label: "Statistic (χ²)", numeric: true },
        { label: "Degrees of freedom", numeric: true },
        { label: "p", numeric: true },
      ],
      rows: [
        ...coxModelTests(r).map((x) => chi(x.name, x)),
        ...t.proportionalHazards.terms.map((x) => chi(`Proportional hazards: ${x.term}`, x)),
        chi("Proportional hazards: global", t.proportionalHazards.global),
      ],
      note: `Proportional-hazards tests: Grambsch and Therneau (1994) score test on the ${t.proportionalHazards.transform} time scale.`,
    },
  ];
}
