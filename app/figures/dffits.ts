/**
 * DFFITS by subject: does any subject's own fitted value move by more than the plan's bound
 * k·√(p/n) when it is left out (Belsley, Kuh and Welsch 1980)? Linear models only.
 */
import type { TopLevelSpec } from "vega-lite";
import { markedSubjects } from "./shared/look";
import { defineFigure } from "./shared/module";
import { signedBySubjectSpec, signedRows, type SignedBySubject } from "./shared/signed-by-subject";
import { appliedThreshold, base, FigureUnavailableError, modelResult } from "./shared/source";
import type { SpecOptions } from "./shared/types";

export interface DffitsData extends SignedBySubject {
  figure: "dffits";
}

export function dffitsSpec(d: DffitsData, opts: SpecOptions = {}): TopLevelSpec {
  return signedBySubjectSpec(
    d,
    "Does leaving out any one subject move its own fitted value far?",
    "every subject inside the dashed bounds.",
    ["DFFITS: the change in the subject's fitted value when it is left out, in units of its standard error."],
    opts,
  );
}

export const dffits = defineFigure<DffitsData>({
  key: "dffits",
  checks: ["dffits"],
  data(source, opts) {
    const r = modelResult(source, "dffits");
    if (r.kind !== "linear")
      throw new FigureUnavailableError(
        "DFFITS is drawn for linear models; this rerun fits a generalized linear model",
      );
    const threshold = appliedThreshold(source, "dffits");
    return {
      figure: "dffits",
      ...base(r, opts),
      measure: "DFFITS",
      threshold,
      series: ["DFFITS"],
      rows: signedRows(r, [{ series: "DFFITS", values: r.observations.dffits }], threshold, opts),
    };
  },
  spec: dffitsSpec,
  words: {
    caption: "DFFITS by subject",
    shows: "each subject's DFFITS in data order, with the planned bounds ±k·√(p/n) as dashed lines",
    healthy: "every subject inside the dashed bounds",
  },
  marked: (d) => markedSubjects(d.rows),
});
