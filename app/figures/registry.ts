/**
 * Every figure of a rerun, one module each (app/figures/<name>.ts), in results-page order. Adding
 * a model type's figures means adding their modules here; the figures route, the results page's
 * check cards and the appendix read them through this list.
 */
import type { TopLevelSpec } from "vega-lite";
import type { CheckKey, CheckOutcome, FigureKey } from "~/engine/checks";
import { binnedResiduals, type BinnedResidualsData } from "./binned-residuals";
import { calibration, type CalibrationData } from "./calibration";
import { cooksDistance, type InfluenceData } from "./cooks-distance";
import { coxDfbetas } from "./cox/cox-dfbetas";
import type { CoxFigureData, CoxSubjectFigureData } from "./cox/cox-figure-types";
import { kaplanMeier } from "./cox/kaplan-meier";
import { logMinusLog } from "./cox/log-minus-log";
import { martingaleCovariate } from "./cox/martingale-covariate";
import { schoenfeld } from "./cox/schoenfeld";
import { dfbetas, type DfbetasData } from "./dfbetas";
import { dffits, type DffitsData } from "./dffits";
import { gvif, type GvifData } from "./gvif";
import { leverageResidual, type LeverageResidualData } from "./leverage-residual";
import { partialResiduals, type PartialResidualsData } from "./partial-residuals";
import { qq, type QqData } from "./qq";
import { meansOverVisits, type MeansOverVisitsData } from "./repeated/means-over-visits";
import { repeatedQq, type RepeatedQqData } from "./repeated/normal-quantiles";
import { repeatedFigureList } from "./repeated/repeated-figure-list";
import { residualsByVisit, type ResidualsByVisitData } from "./repeated/residuals-by-visit";
import { subjectInfluence, type SubjectInfluenceData } from "./repeated/subject-influence";
import { residualsCovariate, type ResidualsCovariateData } from "./residuals-covariate";
import { residualsFitted, type ResidualsFittedData } from "./residuals-fitted";
import type { FigureModule } from "./shared/module";
import { figureTerms, FigureUnavailableError, type FigureOptions, type FigureSource } from "./shared/source";
import { coxFigureList } from "./cox/cox-figure-data";
import type { SpecOptions } from "./shared/types";
import { slopesByArm, type SlopesByArmData } from "./slopes-by-arm";
import { spreadByArm, type SpreadByArmData } from "./spread-by-arm";

/** Figures that draw subjects one by one (their rows name the subject when the viewer may see it). */
export type SubjectFigureData =
  | ResidualsFittedData
  | ResidualsCovariateData
  | PartialResidualsData
  | QqData
  | InfluenceData
  | LeverageResidualData
  | SpreadByArmData
  | DfbetasData
  | DffitsData
  | SlopesByArmData
  | RepeatedSubjectFigureData;

/** The repeated-measures figures whose rows are records or subjects (the adjusted means name no one). */
export type RepeatedSubjectFigureData = ResidualsByVisitData | RepeatedQqData | SubjectInfluenceData;

/** Figures drawn from groups of subjects or from variables: their rows name no one. */
export type GroupFigureData = BinnedResidualsData | CalibrationData | GvifData | MeansOverVisitsData;

export type FigureData = SubjectFigureData | GroupFigureData | CoxFigureData;

/** Every figure module, in results-page order. */
export const FIGURES: readonly FigureModule<FigureData>[] = [
  residualsFitted,
  residualsCovariate,
  partialResiduals,
  qq,
  cooksDistance,
  leverageResidual,
  dfbetas,
  dffits,
  gvif,
  spreadByArm,
  slopesByArm,
  binnedResiduals,
  calibration,
  kaplanMeier,
  logMinusLog,
  schoenfeld,
  martingaleCovariate,
  coxDfbetas,
  meansOverVisits,
  residualsByVisit,
  repeatedQq,
  subjectInfluence,
] as readonly FigureModule[] as readonly FigureModule<FigureData>[];

const BY_KEY = new Map<FigureKey, FigureModule<FigureData>>(FIGURES.map((m) => [m.key, m]));

/** Every figure key, in results-page order. */
export const FIGURE_KEYS: readonly FigureKey[] = FIGURES.map((m) => m.key);

export function figureModule(key: FigureKey): FigureModule<FigureData> {
  const m = BY_KEY.get(key);
  if (!m) throw new FigureUnavailableError(`there is no figure "${key}"`);
  return m;
}

/** The figure a check's card shows: none for a check that was not computed, or that no figure supports. */
export function figureOfCheck(check: Pick<CheckOutcome, "key" | "outcome">): FigureKey | null {
  if (check.outcome === "not_computed") return null;
  return FIGURES.find((m) => m.checks.includes(check.key))?.key ?? null;
}

/** The checks a figure supports or informs, for its alt text. */
export function checksOfFigure(key: FigureKey): readonly CheckKey[] {
  const m = figureModule(key);
  return [...m.checks, ...(m.informs ?? [])];
}

/** The rows of one figure of a rerun. Throws FigureUnavailableError when it cannot be drawn. */
export function figureData(source: FigureSource, figure: FigureKey, opts: FigureOptions): FigureData {
  return figureModule(figure).data(source, opts);
}

/** The specification of one figure from its shaped data. */
export function figureSpec(d: FigureData, opts: SpecOptions = {}): TopLevelSpec {
  return figureModule(d.figure).spec(d, opts);
}

/** True when the figure's rows are subjects (not bins, groups, curves or variables). */
export function plotsSubjects(d: FigureData): d is SubjectFigureData | CoxSubjectFigureData {
  return ![
    "binned_residuals",
    "calibration",
    "gvif",
    "kaplan_meier",
    "log_minus_log",
    "repeated_means",
  ].includes(d.figure);
}

/**
 * The figures of a rerun in reading order, for the appendix and the sponsor report: the residual
 * and influence views, each computed check's own figure (drawn for the covariate its module picks),
 * the spread by arm, the partial residuals of each covariate, and a binomial model's fit figures.
 */
export function figureListOf(source: FigureSource): { figure: FigureKey; term?: string }[] {
  const r = source.result;
  if (r.kind === "cox") return coxFigureList(r);
  if (r.kind === "repeated") return repeatedFigureList(r);
  const { continuous } = figureTerms(source);
  const covariates = continuous.filter((c) => c !== r.spec.treatment);
  const first: FigureKey[] = ["residuals_fitted", "qq", "influence", "leverage_residual"];
  const ofChecks = [
    ...new Set(
      source.checks
        .map((c) => figureOfCheck(c))
        .filter((f): f is FigureKey => f !== null && !first.includes(f) && f !== "partial_residuals"),
    ),
  ];
  return [
    ...first.map((figure) => ({ figure })),
    ...ofChecks.flatMap((figure) => {
      const m = figureModule(figure);
      if (m.perTerm !== "continuous") return [{ figure }];
      const term = m.defaultTerm?.(source) ?? covariates[0];
      return term ? [{ figure, term }] : [];
    }),
    ...(r.spec.treatment && !ofChecks.includes("spread_by_arm")
      ? [{ figure: "spread_by_arm" as const }]
      : []),
    ...covariates.map((term) => ({ figure: "partial_residuals" as const, term })),
    ...(r.kind === "glm" && r.family === "binomial"
      ? [{ figure: "binned_residuals" as const }, { figure: "calibration" as const }]
      : []),
  ];
}
