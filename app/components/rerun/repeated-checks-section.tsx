import { RerunFigure } from "../figures/rerun-figure";
import { repeatedPageFigures, type RepeatedView } from "./repeated-view";
import { ReproductionCard } from "../reproduction-results";
import { CheckCard, checkTally } from "../rerun-results";

/** The plan's checks with their figures, then the repeated-measures figures no check card shows. */
export function RepeatedChecksSection({
  view,
  studyId,
  rerunId,
}: {
  view: RepeatedView;
  studyId: string;
  rerunId: string;
}) {
  const onCards = new Set(view.checks.flatMap((c) => (c.figure ? [c.figure] : [])));
  const others = repeatedPageFigures(view).filter((f) => !onCards.has(f.figure));
  return (
    <>
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
              c.figure ? <RerunFigure studyId={studyId} rerunId={rerunId} figure={c.figure} /> : undefined
            }
          />
        ))}
      </section>
      {others.length > 0 ? (
        <section className="panel p-4" aria-labelledby="repeated-figures-h">
          <h2 id="repeated-figures-h" className="mb-2">
            Means over the visits, residuals and influence
          </h2>
          <p className="mb-2 text-xs text-ink-soft">
            The figures of this model that no planned check above shows. Subject influence:{" "}
            {view.influenceMethod}.
          </p>
          <div className="grid gap-4 lg:grid-cols-2">
            {others.map((f) => (
              <RerunFigure key={f.figure} studyId={studyId} rerunId={rerunId} figure={f.figure} />
            ))}
          </div>
        </section>
      ) : null}
    </>
  );
}
