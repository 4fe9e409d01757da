/**
 * The rows behind each diagnostic figure of a rerun, shaped from the stored result (and, for
 * the figures that plot covariates or arms, from the rerun's own table rows). The specifications
 * that draw them live in app/components/figures/specs.ts; the same rows feed the browser and the
 * appendix.
 */
import { quantileSorted } from "d3-array";
import type {
  BinnedResidualRow,
  CalibrationRow,
  DenseSummary,
  DensityCell,
  FigureData,
  InfluenceRow,
  PointStatus,
  QqRow,
  SubjectRef,
  Threshold,
} from "~/components/figures/specs";
import { BEYOND, DENSE_FROM, DENSE_POINTS, INSIDE_BAND, OUTSIDE_BAND, WITHIN } from "~/components/figures/specs";
import type { CheckKey, CheckOutcome, FigureKey } from "~/engine/checks";
import { normalQuantile } from "~/engine/distributions";
import { loessCurve, type SmoothPoint } from "~/engine/loess";
import type { GlmResult, ModelResult } from "~/engine";
import type { RerunDocument } from "./reruns.server";
import { coxFigureData } from "./cox-figure-data.server";
import { axisBins, blockMaxima, boxSummaries, densityCells, qqKept, round } from "./figure-summaries.server";

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

const INFLUENCE_CHECKS: readonly CheckKey[] = ["cooks_distance", "leverage", "deletion_residual", "dfbetas_treatment", "dffits"];

/** Data rows flagged by any of the given checks. */
function flaggedRows(doc: RerunDocument, keys: readonly CheckKey[]): Set<number> {
  const out = new Set<number>();
  for (const c of doc.checks) if (keys.includes(c.key)) for (const f of c.flagged ?? []) out.add(f.row);
  return out;
}

function checkOf(doc: RerunDocument, key: CheckKey): CheckOutcome | undefined {
  return doc.checks.find((c) => c.key === key && c.outcome !== "not_computed");
}

/**
 * The threshold a check applied, read back from its stored wording ("4.00/n = 0.0089",
 * "2.00·p/n = 0.0444", "|t| > 3.00"): the value after "=" or ">" is the bound itself.
 */
export function appliedThreshold(doc: RerunDocument, key: CheckKey): Threshold | null {
  const c = checkOf(doc, key);
  if (!c) return null;
  const m = /(?:=|>)\s*(-?[\d.]+(?:e[-+]?\d+)?)\s*$/i.exec(c.threshold);
  if (!m) return null;
  const value = Number(m[1]);
  if (!Number.isFinite(value)) return null;
  return { value, label: c.threshold.replace(/(\d+)\.00(?=\D|$)/g, "$1") };
}

function unitOf(name: string, opts: FigureOptions): string {
  return opts.units?.[name] ?? `units of ${name}`;
}

function base(r: ModelResult, opts: FigureOptions) {
  return {
    n: r.n,
    withSubjectIds: opts.withSubjectIds,
    response: r.spec.response,
    responseUnit: unitOf(r.spec.response, opts),
    weighted: r.kind === "linear" && r.observations.weight !== null,
  };
}

function who(r: ModelResult, i: number, withIds: boolean): SubjectRef {
  if (!withIds) return { subject: null, row: null };
  const row = r.observations.row[i];
  return { subject: r.observations.id[i] ?? `row ${row}`, row };
}

/**
 * The residual the figures plot: √w·e with weights, e otherwise, for a linear model; for a GLM
 * the randomized quantile residual (Dunn and Smyth 1996), which is standard normal under the
 * model even for 0/1 and count outcomes, so the same "even band around zero" reading holds.
 */
function residualOf(r: ModelResult, i: number): number {
  return r.kind === "linear" ? r.observations.scaledResidual[i] : r.observations.quantileResidual[i];
}

/** What the Q-Q plot orders: internally studentized residuals (linear) or quantile residuals (GLM). */
function qqValues(r: ModelResult): number[] {
  return r.kind === "linear" ? r.observations.studentizedInternal : r.observations.quantileResidual;
}

/** Cells of a column for each used observation, matched by data row number. */
function cellsFor(r: ModelResult, table: FigureTable | undefined, column: string, figure: FigureKey): string[] {
  if (!table) throw new FigureUnavailableError(`the ${figure} figure needs the rerun's table rows`);
  const cells = table.columns[column];
  if (!cells) throw new FigureUnavailableError(`column "${column}" is not in the rerun's data`);
  const index = new Map<number, number>();
  table.rowNumbers.forEach((row, i) => index.set(row, i));
  return r.observations.row.map((row) => {
    const i = index.get(row);
    if (i === undefined) throw new FigureUnavailableError(`data row ${row} of the rerun is missing from the table given; build it with rerunTable`);
    return cells[i].trim();
  });
}

function mainTermNames(r: ModelResult): string[] {
  return r.spec.terms.flatMap((t) => ("variable" in t ? [t.variable] : []));
}

function requireTerm(r: ModelResult, term: string | undefined, continuousOnly: boolean): { name: string; kind: "continuous" | "categorical"; levels?: string[] } {
  const names = mainTermNames(r);
  if (!term) throw new FigureUnavailableError(`choose a covariate with ?term= (one of ${names.join(", ")})`);
  const v = r.variables.find((x) => x.name === term);
  if (!v || !names.includes(term)) throw new FigureUnavailableError(`"${term}" is not a main term of this model (terms: ${names.join(", ")})`);
  if (continuousOnly && v.kind !== "continuous") throw new FigureUnavailableError(`partial residuals are drawn for continuous covariates; "${term}" is categorical`);
  if (v.kind === "categorical") {
    const levels = [...(v.levels ?? [])];
    const ref = v.reference;
    return { name: term, kind: "categorical", levels: ref ? [ref, ...levels.filter((l) => l !== ref)] : levels };
  }
  return { name: term, kind: "continuous" };
}

function interactionNote(r: ModelResult, term: string): string | undefined {
  const inInteraction = r.spec.terms.some((t) => "interaction" in t && t.interaction.includes(term));
  return inInteraction ? `${term} also enters an interaction; this plot shows its main-effect part only.` : undefined;
}

/** Blom plotting positions, Φ⁻¹((i − 0.375)/(n + 0.25)) for i = 1..n (Blom 1958, Statistical Estimates and Transformed Beta-Variables). */
export function blomQuantiles(n: number): number[] {
  return Array.from({ length: n }, (_, k) => normalQuantile((k + 1 - 0.375) / (n + 0.25)));
}

/** Type 7 quantile (linear interpolation between order statistics, Hyndman and Fan 1996), as the box summaries. */
function quantileOfSorted(sorted: number[], p: number): number {
  return quantileSorted(sorted, p) ?? NaN;
}

/** The figures' smoother: loess, span 0.5, on a grid of 120 points, rounded like the rows. */
function smoothOf(x: readonly number[], y: readonly number[]): SmoothPoint[] {
  return loessCurve(x, y, 0.5, 120).map((p) => ({ x: round(p.x), y: round(p.y) }));
}

/** How many influential subjects get their id written beside the point. */
const LABELLED = 3;

/** The density grid of dense scatter figures: cells of about 12 × 10 pixels in a 560 × 230 plot. */
const GRID = { nx: 48, ny: 24 };

/** A dense influence figure's blocks of consecutive subjects: about one per pixel and a half. */
const BLOCKS = 400;

/** A dense Q-Q plot keeps this many order statistics at each end, and about this many in between. */
const QQ_TAIL = 100;
const QQ_MIDDLE = 400;

/**
 * Who a dense figure draws one by one: the subjects in `beyond` (by data row), largest Cook's
 * distance first, at most DENSE_POINTS; the rest are summarised. Null below DENSE_FROM subjects,
 * where every subject is drawn.
 */
function denseSelection(r: ModelResult, beyond: ReadonlySet<number>): { drawn: Set<number>; summary: DenseSummary } | null {
  const n = r.n;
  if (n < DENSE_FROM) return null;
  const obs = r.observations;
  const candidates = obs.row.map((_, i) => i).filter((i) => beyond.has(obs.row[i]));
  candidates.sort((a, b) => (obs.cooksDistance[b] || 0) - (obs.cooksDistance[a] || 0) || a - b);
  const drawn = new Set(candidates.slice(0, DENSE_POINTS));
  return { drawn, summary: { total: n, beyond: candidates.length, drawn: drawn.size } };
}

/** The indices 0..n−1 in order, or only those drawn one by one. */
function drawnIndices(n: number, dense: { drawn: Set<number> } | null): number[] {
  const all = Array.from({ length: n }, (_, i) => i);
  return dense ? all.filter((i) => dense.drawn.has(i)) : all;
}

/** The density cells of the subjects a dense scatter figure does not draw one by one. */
function cellsOf(x: readonly number[], y: readonly number[], dense: { drawn: Set<number> } | null): DensityCell[] | undefined {
  if (!dense) return undefined;
  const rest = x.map((_, i) => i).filter((i) => !dense.drawn.has(i));
  return densityCells(x, y, rest, { x: axisBins(x, GRID.nx), y: axisBins(y, GRID.ny) });
}

const FAMILY_WORDS: Record<GlmResult["family"], string> = {
  binomial: "binomial",
  poisson: "Poisson",
  quasipoisson: "quasi-Poisson",
  "negative-binomial": "negative binomial",
};

/** The result of a binomial GLM rerun; otherwise FigureUnavailableError saying why `what` needs one. */
function binomialResult(r: ModelResult, what: string): GlmResult {
  const fits = r.kind === "linear" ? "a linear model" : `a ${FAMILY_WORDS[r.family]} model`;
  if (r.kind !== "glm" || r.family !== "binomial") throw new FigureUnavailableError(`${what} is drawn for binomial models of a 0/1 response only, and this rerun fits ${fits}`);
  return r;
}

/** The event a binomial model counts, in words: "resp = 1", or the named event level. */
function eventOf(r: GlmResult): string {
  return `${r.spec.response} = ${r.spec.event ?? "1"}`;
}

/** The rows of one figure of a rerun. Throws FigureUnavailableError when it cannot be drawn. */
export function figureData(doc: RerunDocument, figure: FigureKey, opts: FigureOptions): FigureData {
  if (doc.result.kind === "cox") return coxFigureData(doc, doc.result, figure, opts);
  const r = doc.result;
  const obs = r.observations;
  const n = r.n;
  const b = base(r, opts);
  const influential = flaggedRows(doc, INFLUENCE_CHECKS);
  const statusOf = (i: number, keys: Set<number> = influential): PointStatus => (keys.has(obs.row[i]) ? BEYOND : WITHIN);
  const residuals = obs.row.map((_, i) => residualOf(r, i));

  switch (figure) {
    case "residuals_fitted": {
      const dense = denseSelection(r, influential);
      const rows = drawnIndices(n, dense).map((i) => ({ ...who(r, i, opts.withSubjectIds), fitted: round(obs.fitted[i]), residual: round(residuals[i]), status: statusOf(i) }));
      const cells = cellsOf(obs.fitted, residuals, dense);
      return { figure, ...b, ...(dense ? { dense: dense.summary, cells } : {}), rows, smooth: smoothOf(obs.fitted, residuals) };
    }
    case "residuals_covariate": {
      const t = requireTerm(r, opts.term, false);
      const cells = cellsFor(r, opts.table, t.name, figure);
      const continuous = t.kind === "continuous";
      const values = continuous ? cells.map(Number) : [];
      const dense = denseSelection(r, influential);
      const rows = drawnIndices(n, dense).map((i) => ({
        ...who(r, i, opts.withSubjectIds),
        x: continuous ? round(values[i]) : cells[i],
        residual: round(residuals[i]),
        jitter: round(jitterOf(obs.row[i])),
        status: statusOf(i),
      }));
      const common = { figure, ...b, term: t.name, termUnit: continuous ? unitOf(t.name, opts) : "level", kind: t.kind, note: interactionNote(r, t.name), rows, ...(dense ? { dense: dense.summary } : {}) };
      if (continuous) return { ...common, ...(dense ? { cells: cellsOf(values, residuals, dense) } : {}), smooth: smoothOf(values, residuals) };
      return { ...common, levels: t.levels ?? [], boxes: boxSummaries(t.levels ?? [], cells, residuals) };
    }
    case "partial_residuals": {
      const t = requireTerm(r, opts.term, true);
      const partial = obs.partialResiduals.find((p) => p.term === t.name);
      if (!partial) throw new FigureUnavailableError(`the rerun stored no partial residuals for "${t.name}"`);
      const coef = r.coefficients.find((c) => c.term === t.name);
      const x = cellsFor(r, opts.table, t.name, figure).map(Number);
      // the component b·x centred: partial residual minus the (raw) residual
      const component = partial.values.map((v, i) => v - (r.kind === "linear" ? r.observations.residual[i] : r.observations.workingResidual[i]));
      const dense = denseSelection(r, influential);
      const rows = drawnIndices(n, dense).map((i) => ({
        ...who(r, i, opts.withSubjectIds),
        x: round(x[i]),
        partial: round(partial.values[i]),
        component: round(component[i]),
        status: statusOf(i),
      }));
      // the component is linear in x: its ends are the whole line
      const ends = x.map((_, i) => i).filter((i) => Number.isFinite(x[i]) && Number.isFinite(component[i]));
      const lo = ends.reduce((m, i) => (x[i] < x[m] ? i : m), ends[0]);
      const hi = ends.reduce((m, i) => (x[i] > x[m] ? i : m), ends[0]);
      const fittedLine = ends.length ? [lo, hi].map((i) => ({ x: round(x[i]), component: round(component[i]) })) : [];
      return {
        figure,
        ...b,
        term: t.name,
        termUnit: unitOf(t.name, opts),
        coefficient: coef?.estimate ?? NaN,
        note: interactionNote(r, t.name),
        rows,
        fittedLine,
        ...(dense ? { dense: dense.summary, cells: cellsOf(x, partial.values, dense) } : {}),
        smooth: smoothOf(x, partial.values),
      };
    }
    case "qq": {
      const values = qqValues(r);
      const order = obs.row.map((_, i) => i).filter((i) => Number.isFinite(values[i]));
      order.sort((a, c) => values[a] - values[c] || obs.row[a] - obs.row[c]);
      const theoretical = blomQuantiles(order.length);
      const sorted = order.map((i) => values[i]);
      // reference line through the first and third quartiles (Chambers, Cleveland, Kleiner and Tukey 1983, section 6.3)
      const q1 = quantileOfSorted(sorted, 0.25);
      const q3 = quantileOfSorted(sorted, 0.75);
      const z1 = normalQuantile(0.25);
      const z3 = normalQuantile(0.75);
      const slope = (q3 - q1) / (z3 - z1);
      const intercept = q1 - slope * z1;
      const dense = denseSelection(r, influential);
      // a dense plot keeps the tails, the subjects drawn elsewhere one by one, and a regular thinning of the middle
      const thinned = dense ? qqKept(order.length, QQ_TAIL, QQ_MIDDLE, new Set(order.flatMap((i, k) => (dense.drawn.has(i) ? [k] : [])))) : null;
      const kept = thinned ? thinned.kept : order.map((_, k) => k);
      const rows: QqRow[] = kept.map((k) => ({ ...who(r, order[k], opts.withSubjectIds), theoretical: round(theoretical[k]), sample: round(sorted[k]), status: statusOf(order[k]) }));
      const note = order.length < n ? `${n - order.length} subjects with leverage one have no studentized residual and are not shown.` : undefined;
      return {
        figure,
        ...b,
        reading: r.qqShape.reading,
        summary: r.qqShape.summary,
        line: { slope, intercept },
        rows,
        note,
        ...(dense && thinned ? { dense: dense.summary, thinning: { tail: QQ_TAIL, step: thinned.step } } : {}),
      };
    }
    case "influence": {
      const threshold = appliedThreshold(doc, "cooks_distance");
      const byCook = new Set((checkOf(doc, "cooks_distance")?.flagged ?? []).map((f) => f.row));
      const keys = threshold ? byCook : influential;
      const top = topBy(obs.cooksDistance, LABELLED, (i) => byCook.has(obs.row[i]));
      const dense = denseSelection(r, keys);
      const rows: InfluenceRow[] = drawnIndices(n, dense).map((i) => ({
        ...who(r, i, opts.withSubjectIds),
        order: i + 1,
        cooks: round(obs.cooksDistance[i]),
        leverage: round(obs.leverage[i]),
        dffits: r.kind === "linear" ? round(r.observations.dffits[i]) : null,
        status: statusOf(i, keys),
        label: top.has(i) ? labelOf(r, i, opts.withSubjectIds, top) : null,
      }));
      const blocks = dense ? blockMaxima(obs.cooksDistance, obs.row.map((_, i) => i).filter((i) => !dense.drawn.has(i)), n, BLOCKS) : undefined;
      return { figure, ...b, threshold, rows, ...(dense ? { dense: dense.summary, blocks } : {}) };
    }
    case "leverage_residual": {
      const leverageThreshold = appliedThreshold(doc, "leverage");
      const residualThreshold = appliedThreshold(doc, "deletion_residual");
      const keys = flaggedRows(doc, ["leverage", "deletion_residual", "cooks_distance"]);
      const top = topBy(obs.cooksDistance, LABELLED, (i) => keys.has(obs.row[i]));
      const dense = denseSelection(r, keys);
      const rows = drawnIndices(n, dense).map((i) => ({
        ...who(r, i, opts.withSubjectIds),
        leverage: round(obs.leverage[i]),
        deletionResidual: round(obs.studentizedExternal[i]),
        cooks: round(obs.cooksDistance[i]),
        status: statusOf(i, keys),
        label: top.has(i) ? labelOf(r, i, opts.withSubjectIds, top) : null,
      }));
      return { figure, ...b, leverageThreshold, residualThreshold, rows, ...(dense ? { dense: dense.summary, cells: cellsOf(obs.leverage, obs.studentizedExternal, dense) } : {}) };
    }
    case "spread_by_arm": {
      const treatment = r.spec.treatment;
      if (!treatment) throw new FigureUnavailableError("the model names no treatment, so there are no arms to compare");
      const t = requireTerm(r, treatment, false);
      const cells = cellsFor(r, opts.table, treatment, figure);
      const bf = r.kind === "linear" ? r.tests.brownForsythe : undefined;
      const dense = denseSelection(r, influential);
      const rows = drawnIndices(n, dense).map((i) => ({ ...who(r, i, opts.withSubjectIds), arm: cells[i], residual: round(residuals[i]), jitter: round(jitterOf(obs.row[i])), status: statusOf(i) }));
      const levels = t.levels ?? [];
      return {
        figure,
        ...b,
        treatment,
        levels,
        test: bf && bf.p !== null && bf.statistic !== null ? { statistic: bf.statistic, p: bf.p } : null,
        rows,
        boxes: boxSummaries(levels, cells, residuals),
        ...(dense ? { dense: dense.summary } : {}),
      };
    }
    case "binned_residuals": {
      const g = binomialResult(r, "the binned residual plot");
      if (!g.binnedResiduals?.length) throw new FigureUnavailableError("the rerun stored no binned residuals; rerun it with the current engine");
      // a bin is outside its band when |mean residual| exceeds 2 standard errors (Gelman and Hill 2007, section 5.6)
      const rows: BinnedResidualRow[] = g.binnedResiduals.map((bin, k) => ({
        bin: k + 1,
        n: bin.n,
        meanFitted: round(bin.meanFitted),
        meanResidual: round(bin.meanResidual),
        bound: round(bin.bound),
        lower: round(-bin.bound),
        status: Math.abs(bin.meanResidual) > bin.bound ? OUTSIDE_BAND : INSIDE_BAND,
      }));
      return { figure, ...b, withSubjectIds: false, event: eventOf(g), rows };
    }
    case "calibration": {
      const g = binomialResult(r, "the calibration plot");
      const c = g.checks.calibration;
      if (!c?.groups.length) throw new FigureUnavailableError("the rerun stored no calibration groups; rerun it with the current engine");
      const rows: CalibrationRow[] = c.groups.map((group, k) => ({
        group: k + 1,
        n: group.n,
        meanPredicted: round(group.meanPredicted),
        observed: group.observed,
        expected: round(group.expected),
        observedProportion: round(group.observed / group.n),
      }));
      return { figure, ...b, withSubjectIds: false, event: eventOf(g), rows, test: { statistic: c.statistic, df: c.df, p: c.p }, caution: c.caution };
    }
    default:
      throw new FigureUnavailableError(`the ${figure} figure is drawn for time-to-event (Cox) models only`);
  }
}

/** Indices of the `k` largest values among those passing `eligible`. */
function topBy(values: readonly number[], k: number, eligible: (i: number) => boolean): Map<number, number> {
  const idx = values.map((_, i) => i).filter((i) => eligible(i) && Number.isFinite(values[i]));
  idx.sort((a, b) => values[b] - values[a] || a - b);
  return new Map(idx.slice(0, k).map((i, rank) => [i, rank + 1]));
}

function labelOf(r: ModelResult, i: number, withIds: boolean, top: Map<number, number>): string {
  return withIds ? (r.observations.id[i] ?? `row ${r.observations.row[i]}`) : `rank ${top.get(i)}`;
}

/** The continuous and categorical main terms a results page offers figures for. */
export function figureTerms(doc: RerunDocument): { covariates: string[]; continuous: string[] } {
  const r = doc.result;
  if (r.kind !== "linear") return { covariates: [], continuous: [] };
  const names = mainTermNames(r);
  const continuous = names.filter((name) => r.variables.find((v) => v.name === name)?.kind === "continuous");
  return { covariates: names.filter((name) => name !== r.spec.treatment), continuous };
}
