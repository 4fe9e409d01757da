/** Scaled Schoenfeld residuals of one coefficient against time: is its log hazard ratio constant over time? */
import { markedSubjects } from "../shared/look";
import { defineFigure } from "../shared/module";
import { coxFigureData } from "./cox-figure-data";
import type { SchoenfeldData } from "./cox-figure-types";
import { coxResult } from "./cox-module";
import { schoenfeldSpec } from "./cox-residual-figures";

export const schoenfeld = defineFigure<SchoenfeldData>({
  key: "schoenfeld",
  checks: ["proportional_hazards"],
  perTerm: "coefficient",
  data: (source, opts) =>
    coxFigureData(source, coxResult(source, "schoenfeld"), "schoenfeld", opts) as SchoenfeldData,
  spec: schoenfeldSpec,
  words: {
    caption: "Scaled Schoenfeld residuals against time",
    shows:
      "one point per event: the scaled Schoenfeld residual of the coefficient against the event time, with a loess smoother and the fitted log hazard ratio as a dashed line",
    healthy: "a smoother flat along the dashed line, no trend with time",
  },
  marked: (d) => markedSubjects(d.rows),
});
