/**
 * The rows behind the time-to-event (Cox) figures, shaped on the server
 * (app/.server/reruns/cox-figure-data.server.ts) and drawn by the builders beside this file.
 */
import type { FigureBase, PointStatus, SmoothPoint, SubjectRef, Threshold } from "../shared/types";

export interface ChiSquareText {
  statistic: number;
  df: number;
  p: number;
}

/** One step of a Kaplan–Meier curve (the value holds from `time` to the next step). */
export interface SurvivalStep {
  arm: string;
  time: number;
  estimate: number;
  lower: number | null;
  upper: number | null;
  atRisk: number;
  events: number;
}

export interface KaplanMeierData extends FigureBase {
  figure: "kaplan_meier";
  treatment: string | null;
  arms: string[];
  rows: SurvivalStep[];
  /** Numbers at risk under the curves, per arm at regular times. */
  atRisk: { arm: string; time: number; atRisk: number }[];
  logRank: (ChiSquareText & { stratified: boolean }) | null;
}

export interface LogMinusLogRow {
  arm: string;
  time: number;
  logTime: number;
  logMinusLog: number;
}

export interface LogMinusLogData extends FigureBase {
  figure: "log_minus_log";
  treatment: string | null;
  arms: string[];
  rows: LogMinusLogRow[];
}

export interface SchoenfeldPoint extends SubjectRef {
  time: number;
  scaled: number;
  status: PointStatus;
}

export interface SchoenfeldData extends FigureBase {
  figure: "schoenfeld";
  /** The coefficient plotted (a term's column: "TRTP: Drug" or "AGE"). */
  term: string;
  coefficient: number;
  test: (ChiSquareText & { term: string }) | null;
  transform: string;
  rows: SchoenfeldPoint[];
  smooth: SmoothPoint[];
}

export interface MartingalePoint extends SubjectRef {
  x: number;
  martingale: number;
  status: PointStatus;
}

export interface MartingaleCovariateData extends FigureBase {
  figure: "martingale_covariate";
  term: string;
  termUnit: string;
  test: { statistic: number | null; p: number | null } | null;
  rows: MartingalePoint[];
  smooth: SmoothPoint[];
}

export interface CoxInfluenceRow extends SubjectRef {
  order: number;
  dfbetas: number;
  status: PointStatus;
  label: string | null;
  /** 1 for the most extreme labelled subject (labels are staggered by it so they do not overlap). */
  labelRank: number | null;
}

export interface CoxInfluenceData extends FigureBase {
  figure: "cox_influence";
  /** The treatment coefficient(s) the DFBETAS are on. */
  coefficients: string[];
  threshold: Threshold | null;
  rows: CoxInfluenceRow[];
}

export type CoxFigureData =
  KaplanMeierData | LogMinusLogData | SchoenfeldData | MartingaleCovariateData | CoxInfluenceData;

/** The Cox figures whose rows are subjects (their hover names the subject when the viewer may see it). */
export type CoxSubjectFigureData = SchoenfeldData | MartingaleCovariateData | CoxInfluenceData;
