/**
 * The repeated-measures (MMRM) section of a results page: records and subjects used, the covariance
 * structure used against the planned one, the treatment effect per visit with its F tests, the
 * adjusted means by visit and arm with the subjects behind them, the visits' covariance and
 * correlation, the coefficients with their df, and the plan's checks with their figures. The view
 * is made on the server (repeated-rerun-view.server.ts) and declared here, so components import
 * nothing of the server. Sections live in app/components/rerun/repeated-*.tsx.
 */
import type { FigureKey } from "~/engine/checks";
import type { PopulationStepView } from "./population-note";
import type { ReproductionCardData } from "./reproduction-results";
import type { CheckCardData } from "./rerun-results";
import { RepeatedChecksSection } from "./rerun/repeated-checks-section";
import { RepeatedCovarianceSection } from "./rerun/repeated-covariance-section";
import { RepeatedEffectSection } from "./rerun/repeated-effect-section";
import { RepeatedFitSection } from "./rerun/repeated-fit-section";
import { RepeatedMeansSection } from "./rerun/repeated-means-section";
import { RepeatedCoefficientsSection } from "./rerun/repeated-coefficients-section";
import type { TreatmentEffectPlan } from "./treatment-effect";

interface Interval {
  estimate: number;
  se: number;
  df: number;
  lower: number;
  upper: number;
}

export interface RepeatedFTest {
  name: string;
  hypothesis: string;
  statistic: number;
  numeratorDf: number;
  denominatorDf: number;
  p: number;
}

export interface RepeatedView {
  kind: "repeated";
  description: string;
  rows: {
    inFile: number;
    outsidePopulation: number;
    excludedByOption: number;
    missingCells: number;
    used: number;
  };
  population: readonly PopulationStepView[];
  method: string;
  response: string;
  subjectColumn: string;
  visitColumn: string;
  treatment: string | null;
  /** Records used. */
  n: number;
  subjects: number;
  likelihood: "REML" | "ML";
  dfMethod: string;
  covariance: {
    planned: string;
    used: string;
    asPlanned: boolean;
    attempts: readonly {
      structure: string;
      used: boolean;
      converged: boolean;
      iterations: number;
      reason: string | null;
    }[];
    converged: boolean;
    iterations: number;
    logLik: number;
    aic: number;
    bic: number;
    parameterCount: number;
    visits: readonly string[];
    matrix: readonly (readonly number[])[];
    correlation: readonly (readonly number[])[];
  };
  structureTest: {
    against: "unstructured";
    statistic: number | null;
    df: number | null;
    p: number | null;
    reason: string | null;
  } | null;
  coefficientCovarianceType: string;
  coefficients: readonly (Interval & { name: string; statistic: number; p: number })[];
  arms: readonly string[];
  meansWeighting: string | null;
  visitMeans: readonly (Interval & { level: string; visit: string })[];
  visitContrasts: readonly (Interval & { label: string; visit: string; statistic: number; p: number })[];
  primaryVisit: string;
  treatmentEffect: TreatmentEffectPlan;
  tests: readonly RepeatedFTest[];
  testNotes: readonly string[];
  counts: readonly { visit: string; byArm: readonly number[] }[];
  influenceMethod: string;
  figures: readonly { figure: FigureKey }[];
  checks: readonly (CheckCardData & { figure: FigureKey | null })[];
  reproduction: (ReproductionCardData & { checkOutcome: CheckCardData["outcome"] }) | null;
}

/** The figure addresses of a repeated-measures results page, in page order: the check cards' figures, then the others. */
export function repeatedPageFigures(view: RepeatedView): { figure: FigureKey }[] {
  const onCards = view.checks.flatMap((c) => (c.figure ? [{ figure: c.figure }] : []));
  return [...onCards, ...view.figures.filter((f) => !onCards.some((c) => c.figure === f.figure))];
}

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
