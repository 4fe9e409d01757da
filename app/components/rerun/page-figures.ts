import { coxPageFigures, type CoxView } from "../cox-results";
import { figureUrl } from "../figures/rerun-figure";
import { modelPageFigures } from "./model-page-figures";
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
  return [...new Set(modelPageFigures(view).map((f) => figureUrl(studyId, rerunId, f.figure, f.term)))];
}
