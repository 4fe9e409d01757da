/**
 * One figure as a unit: the data it reads from a rerun, the specification that draws it, the
 * words of its caption and alt text, and the checks whose card it supports. Each figure is one
 * module app/figures/<name>.ts exporting a FigureModule; app/figures/registry.ts lists them, so a
 * model type's figures are added as files, not as cases of a switch.
 */
import type { TopLevelSpec } from "vega-lite";
import type { CheckKey, FigureKey } from "~/engine/checks";
import type { FigureOptions, FigureSource, FigureSummarySource } from "./source";
import type { SpecOptions } from "./types";

export interface FigureWords {
  /** The caption's noun phrase, e.g. "Cook's distance by subject". */
  caption: string;
  /** What the figure shows, for the alt text. */
  shows: string;
  /** What a healthy picture looks like, for the alt text. */
  healthy: string;
}

export interface FigureModule<D extends { figure: FigureKey } = { figure: FigureKey }> {
  key: D["figure"];
  /** The checks whose card shows this figure (a check has one figure or none). */
  checks: readonly CheckKey[];
  /** Other checks the figure informs (named in its alt text), whose card shows another figure. */
  informs?: readonly CheckKey[];
  /** "continuous": drawn per continuous covariate chosen with ?term=; "coefficient": per coefficient. */
  perTerm?: "continuous" | "coefficient";
  /** The covariate a check's card shows when the figure is drawn per covariate (default: the first continuous one). */
  defaultTerm?(source: FigureSummarySource): string | undefined;
  /** Reads covariate values or arms from the rerun's rows (the locked dataset). */
  needsTable?: boolean;
  /** The figure's rows from a rerun; throws FigureUnavailableError (with a reason) when it cannot be drawn. */
  data(source: FigureSource, opts: FigureOptions): D;
  spec(d: D, opts?: SpecOptions): TopLevelSpec;
  words: FigureWords;
  /** The alt text's sentence on what the figure marks (subjects beyond a threshold, bins outside their band, a test). */
  marked(d: D): string;
}

/** Keeps a module's data type while listing it among the others. */
export function defineFigure<D extends { figure: FigureKey }>(m: FigureModule<D>): FigureModule<D> {
  return m;
}
