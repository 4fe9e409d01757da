/**
 * What the results page's sections read of a linear model's or GLM's results view (made on the
 * server by rerun-view.server.ts), declared here so the components import nothing of the server.
 */
import type { ComponentProps } from "react";
import type { FigureKey } from "~/engine/checks";
import type { FitStatisticRow } from "../fit-statistics";
import type { PopulationStepView } from "../population-note";
import type { ReproductionCardData } from "../reproduction-results";
import type {
  AdjustedMeansTable,
  CalibrationTable,
  CheckCardData,
  CoefficientTable,
  ContrastsTable,
  MarginalMeansTable,
  RatioTable,
} from "../rerun-results";
import type { TreatmentEffectPlan } from "../treatment-effect";

interface CommonView {
  rows: {
    inFile: number;
    outsidePopulation: number;
    excludedByOption: number;
    missingCells: number;
    used: number;
  };
  population: readonly PopulationStepView[];
  rank: number;
  fitStatistics: FitStatisticRow[];
  contrasts: ComponentProps<typeof ContrastsTable>["rows"];
  treatmentEffect: TreatmentEffectPlan;
  coefficients: ComponentProps<typeof CoefficientTable>["rows"];
  covarianceType: string;
  dfResidual: number;
  statisticName: "t" | "z";
  family: string;
  checks: readonly (CheckCardData & { figure: FigureKey | null; figureTerm?: string })[];
  reproduction: (ReproductionCardData & { checkOutcome: CheckCardData["outcome"] }) | null;
  continuousTerms: readonly string[];
}

export interface LinearResultsView extends CommonView {
  kind: "linear";
  adjustedMeans?: ComponentProps<typeof AdjustedMeansTable>["rows"] | null;
  adjustedMeansWeighting: ComponentProps<typeof AdjustedMeansTable>["weighting"];
}

export interface GlmResultsView extends CommonView {
  kind: "glm";
  notes: readonly string[];
  marginalMeans: ComponentProps<typeof MarginalMeansTable>["rows"] | null;
  ratios?: ComponentProps<typeof RatioTable>["rows"] | null;
  ratioName?: string | null;
  calibrationGroups: ComponentProps<typeof CalibrationTable>["groups"] | null;
}

export type ModelResultsView = LinearResultsView | GlmResultsView;
