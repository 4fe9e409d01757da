/** The figures a repeated-measures rerun's results page, appendix and report show, in reading order. */
import type { FigureKey } from "~/engine/checks";
import type { RepeatedResult } from "~/engine/repeated/repeated-model";

export function repeatedFigureList(r: RepeatedResult): { figure: FigureKey }[] {
  return [
    { figure: "repeated_means" as const },
    { figure: "repeated_residuals_fitted" as const },
    { figure: "repeated_qq" as const },
    { figure: "repeated_influence" as const },
  ].filter((f) => f.figure !== "repeated_means" || r.adjustedMeans !== null);
}
