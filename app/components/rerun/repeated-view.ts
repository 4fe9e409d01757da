/**
 * What the results page's sections read of a repeated-measures (MMRM) results view (made on the
 * server by repeated-rerun-view.server.ts), declared here so the components import nothing of the
 * server, and the page's figures in page order.
 */
import type { FigureKey } from "~/engine/checks";
import type { PopulationStepView } from "../population-note";
import type { ReproductionCardData } from "../reproduction-results";
import type { CheckCardData } from "../rerun-results";
import type { TreatmentEffectPlan } from "../treatment-effect";

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
  visitContrasts: readonly (Interval & {
    label: string;
    visit: string;
    statistic: number;
    p: number;
    pAdjusted: number | null;
  })[];
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
