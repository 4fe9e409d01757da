import type { FigureKey } from "~/engine/checks";
import type { ModelResultsView } from "./results-view";

/**
 * The continuous covariates' partial residuals: those a check card already shows (the functional
 * form check shows one covariate's), named with their check, and the rest, drawn in the page's
 * partial-residuals panel. Each figure is on the page once: drawn twice at two frame widths, it
 * cost the figure worker one drawing more (`npm run bench:figures`).
 */
export function partialResidualTerms(view: ModelResultsView): {
  withChecks: { term: string; check: string }[];
  inPanel: string[];
} {
  const withChecks = view.checks.flatMap((c) =>
    c.figure === "partial_residuals" && c.figureTerm ? [{ term: c.figureTerm, check: c.label }] : [],
  );
  const shown = new Set(withChecks.map((w) => w.term));
  return { withChecks, inPanel: view.continuousTerms.filter((t) => !shown.has(t)) };
}

/**
 * The figures of a linear model's or GLM's results page in page order (keep in step with
 * model-results.tsx): each check's figure, the partial residuals of each continuous covariate
 * not shown with a check, a binomial model's fit figures. The compute thread makes their answers
 * with the result (derive-page.ts), so it imports nothing of the page's components.
 */
export function modelPageFigures(view: ModelResultsView): { figure: FigureKey; term?: string }[] {
  return [
    ...view.checks.flatMap((c) => (c.figure ? [{ figure: c.figure, term: c.figureTerm }] : [])),
    ...partialResidualTerms(view).inPanel.map((term) => ({ figure: "partial_residuals" as const, term })),
    ...(view.kind === "glm" && view.family === "binomial"
      ? [{ figure: "binned_residuals" as const }, { figure: "calibration" as const }]
      : []),
  ];
}
