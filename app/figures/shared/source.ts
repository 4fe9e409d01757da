/**
 * What a figure reads from a rerun, and the helpers its data function shares with the others:
 * who a point is, which subjects a check flagged, the threshold it applied, the covariate cells of
 * the rerun's rows, and how a figure of many subjects is thinned. Pure: each figure module's data
 * function takes the stored result and check outcomes and returns rows ready to draw.
 */
import { quantileSorted } from "d3-array";
import type { GlmResult, ModelResult } from "~/engine";
import type { CheckKey, CheckOutcome, FigureKey } from "~/engine/checks";
import { normalQuantile } from "~/engine/distributions";
import { loessCurve, type SmoothPoint } from "~/engine/loess";
import type { CoxResult } from "~/engine/survival/cox-model";
import type { RepeatedResult } from "~/engine/repeated/repeated-model";
import type { FunctionalFormTest } from "~/engine/survival/functional-form";
import { axisBins, densityCells } from "./summaries";
import {
  BEYOND,
  DENSE_FROM,
  DENSE_POINTS,
  WITHIN,
  type DenseSummary,
  type DensityCell,
  type PointStatus,
  type SubjectRef,
  type Threshold,
} from "./types";
import { round } from "./summaries";

/** What a figure reads of a rerun: its stored result and check outcomes (a stored rerun document is one). */
export interface FigureSource {
  result: ModelResult | CoxResult | RepeatedResult;
  checks: readonly CheckOutcome[];
  /** Cox reruns: the functional-form test per continuous covariate. */
  coxFunctionalForm?: readonly FunctionalFormTest[];
}

/** A result without its per-observation arrays (what a results page reads, page-document.ts). */
type WithoutObservations<R> = R extends unknown ? Omit<R, "observations"> : never;

/** What a figure module reads to choose its covariate: the result's tests and the checks, no observations. */
export interface FigureSummarySource {
  result: WithoutObservations<FigureSource["result"]>;
  checks: readonly CheckOutcome[];
}

/** Cells as text by column, with the 1-based data row of each row (the engine's table input). */
export interface FigureTable {
  columns: Record<string, string[]>;
  rowNumbers: number[];
}

export interface FigureOptions {
  /** The covariate of residuals_covariate and partial_residuals. */
  term?: string;
  /** Hover details name the subject (id and data row) only when true. */
  withSubjectIds: boolean;
  /**
   * The rerun's rows (after rerunTable in what-if.server.ts): needed for residuals_covariate,
   * partial_residuals and spread_by_arm, which plot covariate values and arms.
   */
  table?: FigureTable;
  /** How to write a column's unit on an axis; default "units of NAME". */
  units?: Record<string, string | null | undefined>;
}

/** A figure that cannot be drawn for this rerun; the message says why. */
export class FigureUnavailableError extends Error {}

/** A deterministic offset in [−1, 1] from the data row (strips must not move between renders). */
export function jitterOf(row: number): number {
  let h = Math.imul(row ^ 0x9e3779b9, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return ((h >>> 0) / 4294967295) * 2 - 1;
}

/** The checks whose flagged subjects a figure of residuals marks as beyond a threshold. */
export const INFLUENCE_CHECKS: readonly CheckKey[] = [
  "cooks_distance",
  "leverage",
  "deletion_residual",
  "dfbetas_treatment",
  "dffits",
];

/** Data rows flagged by any of the given checks. */
export function flaggedRows(doc: FigureSource, keys: readonly CheckKey[]): Set<number> {
  const out = new Set<number>();
  for (const c of doc.checks) if (keys.includes(c.key)) for (const f of c.flagged ?? []) out.add(f.row);
  return out;
}

/** A check's outcome when it was computed. */
export function checkOf(doc: FigureSource, key: CheckKey): CheckOutcome | undefined {
  return doc.checks.find((c) => c.key === key && c.outcome !== "not_computed");
}

/**
 * The threshold a check applied, read back from its stored wording ("4.00/n = 0.0089",
 * "2.00·p/n = 0.0444", "|t| > 3.00"): the value after "=" or ">" is the bound itself.
 */
export function appliedThreshold(doc: FigureSource, key: CheckKey): Threshold | null {
  const c = checkOf(doc, key);
  if (!c) return null;
  const label = c.threshold.replace(/(\d+)\.00(?=\D|$)/g, "$1");
  // the bound as applied, recorded with the check (engine 1.2.0 on); older results give it only in words
  if (c.numbers && c.numbers.compares === "statistic above" && Number.isFinite(c.numbers.threshold))
    return { value: c.numbers.threshold, label };
  const m = /(?:=|>)\s*(-?[\d.]+(?:e[-+]?\d+)?)\s*$/i.exec(c.threshold);
  if (!m) return null;
  const value = Number(m[1]);
  if (!Number.isFinite(value)) return null;
  return { value, label };
}

export function unitOf(name: string, opts: FigureOptions): string {
  return opts.units?.[name] ?? `units of ${name}`;
}

/** The shared part of a linear or generalized linear figure's data. */
export function base(r: ModelResult, opts: FigureOptions) {
  return {
    n: r.n,
    withSubjectIds: opts.withSubjectIds,
    response: r.spec.response,
    responseUnit: unitOf(r.spec.response, opts),
    weighted: r.kind === "linear" && r.observations.weight !== null,
    ...(r.kind === "glm" ? { glm: { family: r.family, link: r.link } } : {}),
  };
}

export function who(r: ModelResult, i: number, withIds: boolean): SubjectRef {
  if (!withIds) return { subject: null, row: null };
  const row = r.observations.row[i];
  return { subject: r.observations.id[i] ?? `row ${row}`, row };
}

/**
 * The residual the figures plot: √w·e with weights, e otherwise, for a linear model; for a GLM
 * the randomized quantile residual (Dunn and Smyth 1996), which is standard normal under the
 * model even for 0/1 and count outcomes, so the same "even band around zero" reading holds.
 */
export function residualOf(r: ModelResult, i: number): number {
  return r.kind === "linear" ? r.observations.scaledResidual[i] : r.observations.quantileResidual[i];
}

/** What the Q-Q plot orders: internally studentized residuals (linear) or quantile residuals (GLM). */
export function qqValues(r: ModelResult): number[] {
  return r.kind === "linear" ? r.observations.studentizedInternal : r.observations.quantileResidual;
}

/** Cells of a column for each used observation, matched by data row number. */
export function cellsFor(
  r: ModelResult,
  table: FigureTable | undefined,
  column: string,
  figure: FigureKey,
): string[] {
  if (!table) throw new FigureUnavailableError(`the ${figure} figure needs the rerun's table rows`);
  const cells = table.columns[column];
  if (!cells) throw new FigureUnavailableError(`column "${column}" is not in the rerun's data`);
  const index = new Map<number, number>();
  table.rowNumbers.forEach((row, i) => index.set(row, i));
  return r.observations.row.map((row) => {
    const i = index.get(row);
    if (i === undefined)
      throw new FigureUnavailableError(
        `data row ${row} of the rerun is missing from the table given; build it with rerunTable`,
      );
    return cells[i].trim();
  });
}

export function mainTermNames(r: ModelResult): string[] {
  return r.spec.terms.flatMap((t) => ("variable" in t ? [t.variable] : []));
}

export function requireTerm(
  r: ModelResult,
  term: string | undefined,
  continuousOnly: boolean,
): { name: string; kind: "continuous" | "categorical"; levels?: string[] } {
  const names = mainTermNames(r);
  if (!term) throw new FigureUnavailableError(`choose a covariate with ?term= (one of ${names.join(", ")})`);
  const v = r.variables.find((x) => x.name === term);
  if (!v || !names.includes(term))
    throw new FigureUnavailableError(
      `"${term}" is not a main term of this model (terms: ${names.join(", ")})`,
    );
  if (continuousOnly && v.kind !== "continuous")
    throw new FigureUnavailableError(
      `partial residuals are drawn for continuous covariates; "${term}" is categorical`,
    );
  if (v.kind === "categorical") {
    const levels = [...(v.levels ?? [])];
    const ref = v.reference;
    return {
      name: term,
      kind: "categorical",
      levels: ref ? [ref, ...levels.filter((l) => l !== ref)] : levels,
    };
  }
  return { name: term, kind: "continuous" };
}

export function interactionNote(r: ModelResult, term: string): string | undefined {
  const inInteraction = r.spec.terms.some((t) => "interaction" in t && t.interaction.includes(term));
  return inInteraction
    ? `${term} also enters an interaction; this plot shows its main-effect part only.`
    : undefined;
}

/** Blom plotting positions, Φ⁻¹((i − 0.375)/(n + 0.25)) for i = 1..n (Blom 1958, Statistical Estimates and Transformed Beta-Variables). */
export function blomQuantiles(n: number): number[] {
  return Array.from({ length: n }, (_, k) => normalQuantile((k + 1 - 0.375) / (n + 0.25)));
}

/** Type 7 quantile (linear interpolation between order statistics, Hyndman and Fan 1996), as the box summaries. */
export function quantileOfSorted(sorted: number[], p: number): number {
  return quantileSorted(sorted, p) ?? NaN;
}

/** The figures' smoother: loess, span 0.5, on a grid of 120 points, rounded like the rows. */
export function smoothOf(x: readonly number[], y: readonly number[]): SmoothPoint[] {
  return loessCurve(x, y, 0.5, 120).map((p) => ({ x: round(p.x), y: round(p.y) }));
}

/** How many influential subjects get their id written beside the point. */
export const LABELLED = 3;

/** The density grid of dense scatter figures: cells of about 12 × 10 pixels in a 560 × 230 plot. */
const GRID = { nx: 48, ny: 24 };

/**
 * Who a dense figure draws one by one: the subjects in `beyond` (by data row), largest Cook's
 * distance first, at most DENSE_POINTS; the rest are summarised. Null below DENSE_FROM subjects,
 * where every subject is drawn.
 */
export function denseSelection(
  r: ModelResult,
  beyond: ReadonlySet<number>,
): { drawn: Set<number>; summary: DenseSummary } | null {
  const n = r.n;
  if (n < DENSE_FROM) return null;
  const obs = r.observations;
  const candidates = obs.row.map((_, i) => i).filter((i) => beyond.has(obs.row[i]));
  candidates.sort((a, b) => (obs.cooksDistance[b] || 0) - (obs.cooksDistance[a] || 0) || a - b);
  const drawn = new Set(candidates.slice(0, DENSE_POINTS));
  return { drawn, summary: { total: n, beyond: candidates.length, drawn: drawn.size } };
}

/** The indices 0..n−1 in order, or only those drawn one by one. */
export function drawnIndices(n: number, dense: { drawn: Set<number> } | null): number[] {
  const all = Array.from({ length: n }, (_, i) => i);
  return dense ? all.filter((i) => dense.drawn.has(i)) : all;
}

/** The density cells of the subjects a dense scatter figure does not draw one by one. */
export function cellsOf(
  x: readonly number[],
  y: readonly number[],
  dense: { drawn: Set<number> } | null,
): DensityCell[] | undefined {
  if (!dense) return undefined;
  const rest = x.map((_, i) => i).filter((i) => !dense.drawn.has(i));
  return densityCells(x, y, rest, { x: axisBins(x, GRID.nx), y: axisBins(y, GRID.ny) });
}

export const FAMILY_WORDS: Record<GlmResult["family"], string> = {
  binomial: "binomial",
  poisson: "Poisson",
  quasipoisson: "quasi-Poisson",
  "negative-binomial": "negative binomial",
};

/** The result of a binomial GLM rerun; otherwise FigureUnavailableError saying why `what` needs one. */
export function binomialResult(r: ModelResult, what: string): GlmResult {
  const fits = r.kind === "linear" ? "a linear model" : `a ${FAMILY_WORDS[r.family]} model`;
  if (r.kind !== "glm" || r.family !== "binomial")
    throw new FigureUnavailableError(
      `${what} is drawn for binomial models of a 0/1 response only, and this rerun fits ${fits}`,
    );
  return r;
}

/** The event a binomial model counts, in words: "resp = 1", or the named event level. */
export function eventOf(r: GlmResult): string {
  return `${r.spec.response} = ${r.spec.event ?? "1"}`;
}

/** Indices of the `k` largest values among those passing `eligible`. */
export function topBy(
  values: readonly number[],
  k: number,
  eligible: (i: number) => boolean,
): Map<number, number> {
  const idx = values.map((_, i) => i).filter((i) => eligible(i) && Number.isFinite(values[i]));
  idx.sort((a, b) => values[b] - values[a] || a - b);
  return new Map(idx.slice(0, k).map((i, rank) => [i, rank + 1]));
}

export function labelOf(r: ModelResult, i: number, withIds: boolean, top: Map<number, number>): string {
  return withIds ? (r.observations.id[i] ?? `row ${r.observations.row[i]}`) : `rank ${top.get(i)}`;
}

/** The continuous and categorical main terms a results page offers figures for. */
export function figureTerms(doc: FigureSource): { covariates: string[]; continuous: string[] } {
  const r = doc.result;
  if (r.kind !== "linear") return { covariates: [], continuous: [] };
  const names = mainTermNames(r);
  const continuous = names.filter((name) => r.variables.find((v) => v.name === name)?.kind === "continuous");
  return { covariates: names.filter((name) => name !== r.spec.treatment), continuous };
}

/** The linear or generalized linear result of a rerun; Cox and repeated-measures reruns have figures of their own. */
export function modelResult(doc: FigureSource, figure: FigureKey): ModelResult {
  if (doc.result.kind === "cox" || doc.result.kind === "repeated")
    throw new FigureUnavailableError(
      `the ${figure} figure is drawn for linear and generalized linear models; this rerun fits a ${doc.result.kind === "cox" ? "Cox" : "repeated-measures"} model`,
    );
  return doc.result;
}

/** What most subject figures start from: the result, its shared data, the residuals plotted, and each subject's status by the influence checks. */
export function subjectsOf(doc: FigureSource, figure: FigureKey, opts: FigureOptions) {
  const r = modelResult(doc, figure);
  const obs = r.observations;
  const influential = flaggedRows(doc, INFLUENCE_CHECKS);
  const statusOf = (i: number, keys: ReadonlySet<number> = influential): PointStatus =>
    keys.has(obs.row[i]) ? BEYOND : WITHIN;
  const residuals = obs.row.map((_, i) => residualOf(r, i));
  return { r, obs, n: r.n, b: base(r, opts), influential, statusOf, residuals };
}
