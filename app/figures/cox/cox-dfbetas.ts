/** DFBETAS on the treatment log hazard ratio by subject: does any subject alone shift the treatment effect? */
import { markedSubjects } from "../shared/look";
import { defineFigure } from "../shared/module";
import { coxFigureData } from "./cox-figure-data";
import type { CoxInfluenceData } from "./cox-figure-types";
import { coxResult } from "./cox-module";
import { coxInfluenceSpec } from "./cox-residual-figures";

export const coxDfbetas = defineFigure<CoxInfluenceData>({
  key: "cox_influence",
  checks: ["dfbetas_treatment_cox"],
  data: (source, opts) =>
    coxFigureData(source, coxResult(source, "cox_influence"), "cox_influence", opts) as CoxInfluenceData,
  spec: coxInfluenceSpec,
  words: {
    caption: "DFBETAS on the treatment log hazard ratio by subject",
    shows:
      "each subject's DFBETAS on the treatment coefficient in data order, with the planned threshold as dashed lines",
    healthy: "every subject inside the dashed lines",
  },
  marked: (d) => markedSubjects(d.rows),
});
