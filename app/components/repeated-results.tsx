/**
 * The repeated-measures (MMRM) section of a results page: records and subjects used, the covariance
 * structure used against the planned one, the treatment effect per visit with its F tests, the
 * adjusted means by visit and arm with the subjects behind them, the visits' covariance and
 * correlation, the coefficients with their df, and the plan's checks with their figures. The view
 * is made on the server (repeated-rerun-view.server.ts) and declared in rerun/repeated-view.ts, so
 * components import nothing of the server. Sections live in app/components/rerun/repeated-*.tsx.
 */
import { RepeatedChecksSection } from "./rerun/repeated-checks-section";
import { RepeatedCoefficientsSection } from "./rerun/repeated-coefficients-section";
import { RepeatedCovarianceSection } from "./rerun/repeated-covariance-section";
import { RepeatedEffectSection } from "./rerun/repeated-effect-section";
import { RepeatedFitSection } from "./rerun/repeated-fit-section";
import { RepeatedMeansSection } from "./rerun/repeated-means-section";
import type { RepeatedView } from "./rerun/repeated-view";

export type { RepeatedView };

export function RepeatedResults({
  view,
  studyId,
  rerunId,
}: {
  view: RepeatedView;
  studyId: string;
  rerunId: string;
}) {
  return (
    <>
      <RepeatedFitSection view={view} />
      <RepeatedEffectSection view={view} />
      <RepeatedMeansSection view={view} />
      <RepeatedCovarianceSection view={view} />
      <RepeatedCoefficientsSection view={view} />
      <RepeatedChecksSection view={view} studyId={studyId} rerunId={rerunId} />
    </>
  );
}
