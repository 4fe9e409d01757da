import { CoefficientTable, RatioTable } from "../rerun-results";
import type { ModelResultsView } from "./results-view";

/** The model's coefficients, and a GLM's conditional ratios. */
export function CoefficientsSection({ view }: { view: ModelResultsView }) {
  return (
    <section className="panel p-4" aria-labelledby="coef-h">
      <h2 id="coef-h" className="mb-2">
        Coefficients
      </h2>
      <CoefficientTable
        rows={view.coefficients}
        covarianceType={view.covarianceType}
        df={view.dfResidual}
        statisticName={view.statisticName}
      />
      {view.kind === "glm" && view.ratios && view.ratioName ? (
        <div className="mt-4">
          <RatioTable rows={view.ratios} ratioName={view.ratioName} />
        </div>
      ) : null}
    </section>
  );
}
