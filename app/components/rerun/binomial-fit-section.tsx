import { RerunFigure } from "../figures/rerun-figure";
import { CalibrationTable } from "../rerun-results";
import type { ModelResultsView } from "./results-view";

/** A binomial GLM's fit: binned residuals, calibration and the Hosmer–Lemeshow groups; nothing for other models. */
export function BinomialFitSection({
  view,
  studyId,
  rerunId,
}: {
  view: ModelResultsView;
  studyId: string;
  rerunId: string;
}) {
  if (view.kind !== "glm" || view.family !== "binomial") return null;
  return (
    <section className="panel p-4" aria-labelledby="binomial-fit-h">
      <h2 id="binomial-fit-h" className="mb-2">
        Fit of the binomial model
      </h2>
      <p className="mb-2 text-xs text-ink-soft">
        Whether the predicted probabilities match what happened: the mean residual of subjects with similar
        fitted probabilities, and the observed against the predicted proportion in ten groups of equal size by
        predicted risk (the Hosmer–Lemeshow groups).
      </p>
      <div className="grid gap-4 lg:grid-cols-2">
        <RerunFigure studyId={studyId} rerunId={rerunId} figure="binned_residuals" />
        <RerunFigure studyId={studyId} rerunId={rerunId} figure="calibration" />
      </div>
      {view.calibrationGroups ? (
        <div className="mt-4 max-w-2xl overflow-x-auto">
          <CalibrationTable groups={view.calibrationGroups} />
        </div>
      ) : null}
    </section>
  );
}
