/**
 * DFBETAS on the treatment coefficient by subject: does any subject alone shift the treatment
 * effect by more than the plan's bound k/√n (Belsley, Kuh and Welsch 1980)? A treatment with
 * several arms has one point per subject and arm's coefficient.
 */
import type { TopLevelSpec } from "vega-lite";
import { markedSubjects } from "./shared/look";
import { defineFigure } from "./shared/module";
import { signedBySubjectSpec, signedRows, type SignedBySubject } from "./shared/signed-by-subject";
import { appliedThreshold, base, FigureUnavailableError, modelResult } from "./shared/source";
import type { SpecOptions } from "./shared/types";

export interface DfbetasData extends SignedBySubject {
  figure: "dfbetas";
}

export function dfbetasSpec(d: DfbetasData, opts: SpecOptions = {}): TopLevelSpec {
  return signedBySubjectSpec(
    d,
    "Does any single subject shift the treatment effect?",
    "every subject inside the dashed bounds; no subject alone moves the treatment coefficient by more than the bound.",
    [
      "DFBETAS: the change in the treatment coefficient when the subject is left out, in units of its standard error.",
    ],
    opts,
  );
}

export const dfbetas = defineFigure<DfbetasData>({
  key: "dfbetas",
  checks: ["dfbetas_treatment"],
  data(source, opts) {
    const r = modelResult(source, "dfbetas");
    const t = r.spec.treatment;
    if (!t)
      throw new FigureUnavailableError("the model names no treatment, so there is no treatment coefficient");
    const idx = r.coefficients.flatMap((c, i) => (c.term === t ? [i] : []));
    if (!idx.length) throw new FigureUnavailableError("the rerun has no treatment coefficient");
    const threshold = appliedThreshold(source, "dfbetas_treatment");
    const series = idx.map((j) => ({ series: r.coefficients[j].name, values: r.observations.dfbetas[j] }));
    return {
      figure: "dfbetas",
      ...base(r, opts),
      measure: "DFBETAS on treatment",
      threshold,
      series: series.map((s) => s.series),
      rows: signedRows(r, series, threshold, opts),
    };
  },
  spec: dfbetasSpec,
  words: {
    caption: "DFBETAS on the treatment coefficient by subject",
    shows:
      "each subject's DFBETAS on the treatment coefficient in data order, with the planned bounds ±k/√n as dashed lines",
    healthy: "every subject inside the dashed bounds",
  },
  marked: (d) => markedSubjects(d.rows),
});
