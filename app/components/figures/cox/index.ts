/** The time-to-event (Cox) figures: their data types and the specification of each. */
import type { TopLevelSpec } from "vega-lite";
import type { SpecOptions } from "../specs";
import type { CoxFigureData } from "./cox-figure-types";
import { coxInfluenceSpec, martingaleCovariateSpec, schoenfeldSpec } from "./cox-residual-figures";
import { kaplanMeierSpec, logMinusLogSpec } from "./survival-curves";

export type * from "./cox-figure-types";

/** The Cox figure keys, in results-page order. */
export const COX_FIGURE_KEYS = ["kaplan_meier", "log_minus_log", "schoenfeld", "martingale_covariate", "cox_influence"] as const;

export function coxFigureSpec(d: CoxFigureData, opts: SpecOptions = {}): TopLevelSpec {
  switch (d.figure) {
    case "kaplan_meier":
      return kaplanMeierSpec(d, opts);
    case "log_minus_log":
      return logMinusLogSpec(d, opts);
    case "schoenfeld":
      return schoenfeldSpec(d, opts);
    case "martingale_covariate":
      return martingaleCovariateSpec(d, opts);
    case "cox_influence":
      return coxInfluenceSpec(d, opts);
  }
}
