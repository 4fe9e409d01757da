/** Martingale residuals against a continuous covariate: is the covariate's effect on the log hazard straight? */
import { markedSubjects } from "../shared/look";
import { defineFigure } from "../shared/module";
import { coxFigureData } from "./cox-figure-data";
import type { MartingaleCovariateData } from "./cox-figure-types";
import { coxResult } from "./cox-module";
import { martingaleCovariateSpec } from "./cox-residual-figures";

export const martingaleCovariate = defineFigure<MartingaleCovariateData>({
  key: "martingale_covariate",
  checks: ["functional_form_cox"],
  perTerm: "continuous",
  needsTable: true,
  data: (source, opts) =>
    coxFigureData(
      source,
      coxResult(source, "martingale_covariate"),
      "martingale_covariate",
      opts,
    ) as MartingaleCovariateData,
  spec: martingaleCovariateSpec,
  words: {
    caption: "Martingale residuals against the covariate",
    shows:
      "each subject's martingale residual against the covariate, with a loess smoother and a dashed line at zero",
    healthy: "a smoother flat around zero across the covariate's range",
  },
  marked: (d) => markedSubjects(d.rows),
});
