import { AdjustedMeansTable, ContrastsTable, MarginalMeansTable } from "../rerun-results";
import { TreatmentEffectNote } from "../treatment-effect";
import type { ModelResultsView } from "./results-view";

/** The treatment contrasts as the plan states them, with the adjusted (linear) or marginal (GLM) means; nothing without contrasts. */
export function TreatmentEffectSection({ view }: { view: ModelResultsView }) {
  if (view.contrasts.length === 0) return null;
  return (
    <section className="panel p-4" aria-labelledby="effect-h">
      <h2 id="effect-h" className="mb-2">
        Treatment effect
      </h2>
      <ContrastsTable rows={view.contrasts} kind={view.kind} plan={view.treatmentEffect} />
      <TreatmentEffectNote plan={view.treatmentEffect} />
      {view.kind === "linear" && view.adjustedMeans ? (
        <div className="mt-4">
          <AdjustedMeansTable rows={view.adjustedMeans} weighting={view.adjustedMeansWeighting} />
        </div>
      ) : null}
      {view.kind === "glm" && view.marginalMeans ? (
        <div className="mt-4">
          <MarginalMeansTable rows={view.marginalMeans} family={view.family} />
        </div>
      ) : null}
    </section>
  );
}
