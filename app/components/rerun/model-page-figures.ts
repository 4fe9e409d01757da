import type { FigureKey } from "~/engine/checks";
import type { ModelResultsView } from "./results-view";

/**
 * The figures of a linear model's or GLM's results page in page order (keep in step with
 * model-results.tsx): each check's figure, the partial residuals of each continuous covariate,
 * a binomial model's fit figures. The compute thread makes their answers with the result
 * (derive-page.ts), so it imports nothing of the page's components.
 */
export function modelPageFigures(view: ModelResultsView): { figure: FigureKey; term?: string }[] {
  return [
    ...view.checks.flatMap((c) => (c.figure ? [{ figure: c.figure, term: c.figureTerm }] : [])),
    ...view.continuousTerms.map((term) => ({ figure: "partial_residuals" as const, term })),
    ...(view.kind === "glm" && view.family === "binomial"
      ? [{ figure: "binned_residuals" as const }, { figure: "calibration" as const }]
      : []),
  ];
}
