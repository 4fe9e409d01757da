/** log(−log S) against log time by arm: do the arms' curves run parallel (proportional hazards)? */
import { defineFigure } from "../shared/module";
import { coxFigureData } from "./cox-figure-data";
import type { LogMinusLogData } from "./cox-figure-types";
import { armsAndLogRank, coxResult } from "./cox-module";
import { logMinusLogSpec } from "./survival-curves";

export const logMinusLog = defineFigure<LogMinusLogData>({
  key: "log_minus_log",
  checks: [],
  informs: ["proportional_hazards"],
  data: (source, opts) =>
    coxFigureData(source, coxResult(source, "log_minus_log"), "log_minus_log", opts) as LogMinusLogData,
  spec: logMinusLogSpec,
  words: {
    caption: "log(−log S) against log time by arm",
    shows: "the log of minus the log of each arm's Kaplan–Meier estimate against log time",
    healthy: "roughly parallel lines, a constant gap between arms",
  },
  marked: (d) => armsAndLogRank(d.arms, null),
});
