import { CoxResults, type CoxView } from "../cox-results";
import { RepeatedResults, type RepeatedView } from "../repeated-results";
import { FigureFramesReady } from "../figures/figure-worker-start";
import { BinomialFitSection } from "./binomial-fit-section";
import { ChecksSection } from "./checks-section";
import { CoefficientsSection } from "./coefficients-section";
import type { ModelResultsView } from "./results-view";
import { RowsAndFit } from "./rows-and-fit";
import { TreatmentEffectSection } from "./treatment-effect-section";

/** A completed rerun's results: a Cox model's, a repeated-measures model's, or a linear model's or GLM's sections in page order. */
export function ModelResults({
  view,
  studyId,
  rerunId,
}: {
  view: ModelResultsView | CoxView | RepeatedView;
  studyId: string;
  rerunId: string;
}) {
  if (view.kind === "repeated") {
    return (
      <div className="space-y-6">
        <RepeatedResults view={view} studyId={studyId} rerunId={rerunId} />
        <FigureFramesReady />
      </div>
    );
  }
  if (view.kind === "cox") {
    return (
      <div className="space-y-6">
        <CoxResults view={view} studyId={studyId} rerunId={rerunId} />
        <FigureFramesReady />
      </div>
    );
  }
  return (
    <div className="space-y-6">
      <RowsAndFit view={view} />
      <TreatmentEffectSection view={view} />
      <CoefficientsSection view={view} />
      <ChecksSection view={view} studyId={studyId} rerunId={rerunId} />
      <BinomialFitSection view={view} studyId={studyId} rerunId={rerunId} />
      {/* after the last figure frame: the worker the page started at its top (FigureWorkerStart) draws them while the page's scripts load */}
      <FigureFramesReady />
    </div>
  );
}
