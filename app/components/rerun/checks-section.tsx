import { RerunFigure } from "../figures/rerun-figure";
import { ReproductionCard } from "../reproduction-results";
import { CheckCard, checkTally } from "../rerun-results";
import { partialResidualTerms } from "./model-page-figures";
import type { ModelResultsView } from "./results-view";

/** The plan's checks with their figures, the reproduction check, and the partial residuals of the continuous covariates. */
export function ChecksSection({
  view,
  studyId,
  rerunId,
}: {
  view: ModelResultsView;
  studyId: string;
  rerunId: string;
}) {
  const partial = partialResidualTerms(view);
  return (
    <section aria-labelledby="checks-h" className="space-y-3">
      <h2 id="checks-h">Checks of the plan</h2>
      <p className="text-sm text-ink-soft">
        {checkTally([
          ...view.checks,
          ...(view.reproduction ? [{ outcome: view.reproduction.checkOutcome }] : []),
        ])}
      </p>
      {view.reproduction ? <ReproductionCard check={view.reproduction} /> : null}
      {view.checks.map((c) => (
        <CheckCard
          key={c.key}
          check={c}
          figure={
            c.figure ? (
              <RerunFigure studyId={studyId} rerunId={rerunId} figure={c.figure} term={c.figureTerm} />
            ) : undefined
          }
        />
      ))}
      {view.continuousTerms.length > 0 ? (
        <article className="panel p-4">
          <h3 className="mb-2 text-base font-semibold">Partial residuals</h3>
          <p className="mb-2 text-xs text-ink-soft">
            Linearity of each continuous covariate's effect: the points should follow the straight line
            without a bend.
          </p>
          {partial.withChecks.map((w) => (
            <p key={w.term} className="mb-2 text-xs text-ink-soft">
              {w.term}: shown with the check “{w.check}” above.
            </p>
          ))}
          {partial.inPanel.length > 0 ? (
            <div className="grid gap-4 lg:grid-cols-2">
              {partial.inPanel.map((term) => (
                <RerunFigure
                  key={term}
                  studyId={studyId}
                  rerunId={rerunId}
                  figure="partial_residuals"
                  term={term}
                />
              ))}
            </div>
          ) : null}
        </article>
      ) : null}
    </section>
  );
}
