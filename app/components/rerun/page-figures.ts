import type { FigureKey } from "~/engine/checks";
import { coxPageFigures, type CoxView } from "../cox-results";
import { figureUrl } from "../figures/rerun-figure";
import { repeatedPageFigures, type RepeatedView } from "./repeated-view";
import type { ModelResultsView } from "./results-view";

/** The results page's figure addresses in page order (keep in step with the figures of model-results.tsx), for the figure worker to fetch early. */
export function pageFigureUrls(
  view: ModelResultsView | CoxView | RepeatedView,
  studyId: string,
  rerunId: string,
): string[] {
  if (view.kind === "repeated")
    return [...new Set(repeatedPageFigures(view).map((f) => figureUrl(studyId, rerunId, f.figure)))];
  if (view.kind === "cox")
    return [...new Set(coxPageFigures(view).map((f) => figureUrl(studyId, rerunId, f.figure, f.term)))];
  const figures: { figure: FigureKey; term?: string }[] = [
    ...view.checks.flatMap((c) => (c.figure ? [{ figure: c.figure, term: c.figureTerm }] : [])),
    ...view.continuousTerms.map((term) => ({ figure: "partial_residuals" as const, term })),
    ...(view.kind === "glm" && view.family === "binomial"
      ? [{ figure: "binned_residuals" as const }, { figure: "calibration" as const }]
      : []),
  ];
  return [...new Set(figures.map((f) => figureUrl(studyId, rerunId, f.figure, f.term)))];
}
