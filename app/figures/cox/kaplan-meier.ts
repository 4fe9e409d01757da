/** Kaplan–Meier curves by arm with the numbers at risk: do the arms' event-free proportions separate and stay apart? */
import { defineFigure } from "../shared/module";
import { coxFigureData } from "./cox-figure-data";
import type { KaplanMeierData } from "./cox-figure-types";
import { armsAndLogRank, coxResult } from "./cox-module";
import { kaplanMeierSpec } from "./survival-curves";

export const kaplanMeier = defineFigure<KaplanMeierData>({
  key: "kaplan_meier",
  checks: ["events_per_coefficient"],
  data: (source, opts) =>
    coxFigureData(source, coxResult(source, "kaplan_meier"), "kaplan_meier", opts) as KaplanMeierData,
  spec: kaplanMeierSpec,
  words: {
    caption: "Kaplan–Meier curves by arm with numbers at risk",
    shows:
      "the proportion of subjects still free of the event over time in each arm, with 95% Greenwood bands and the numbers at risk below the axis",
    healthy: "curves that separate and stay apart without crossing",
  },
  marked: (d) => armsAndLogRank(d.arms, d.logRank),
});
