/**
 * The rows a Cox model uses: complete cases over time, status, terms, strata, weights, offset
 * and cluster; the design (treatment coding, no intercept: the baseline hazard absorbs it);
 * rows sorted by stratum and time with the blocks of tied times the risk-set sweep walks.
 */
import { cellText, isMissingAt, parseNumber, selectRows, type DataTable, type TypedColumn } from "../data";
import { levelName } from "../coefficient-names";
import { buildDesign, prepareData, type Design, type PreparedData } from "../design";
import { EngineError } from "../errors";
import type { ModelSpec } from "../model-spec";
import type { CoxSpec } from "./cox-spec";

/** A block of rows (positions in `order`) sharing stratum and time. */
export interface TimeBlock {
  readonly stratum: number;
  readonly time: number;
  readonly start: number;
  readonly end: number;
  /** Positions (into `order`) of the rows with an event. */
  readonly deaths: readonly number[];
}

export interface CoxData {
  readonly n: number;
  readonly p: number;
  /** Column-major n×p design, each column centered at its mean (the partial likelihood does not see the shift). */
  readonly x: Float64Array;
  /** Column means removed from `x`. */
  readonly means: Float64Array;
  readonly time: Float64Array;
  /** 1 for an event, 0 for censoring. */
  readonly status: Uint8Array;
  readonly weight: Float64Array;
  readonly offset: Float64Array;
  readonly stratum: Int32Array;
  /** Stratum labels ("column=value, …"); one empty label when the model has no strata. */
  readonly strataLabels: readonly string[];
  /** Row indices sorted by stratum, then time ascending, events before censoring at a tie. */
  readonly order: Int32Array;
  /** Blocks of tied (stratum, time), ascending within each stratum. */
  readonly blocks: readonly TimeBlock[];
  readonly cluster: readonly string[] | null;
  readonly weighted: boolean;
}

export interface PreparedCox {
  readonly data: CoxData;
  readonly prepared: PreparedData;
  readonly design: Design;
  /** The linear-model view of the specification the design was built from. */
  readonly designSpec: ModelSpec;
  readonly excludedRows: number[];
}

function statusMatcher(spec: CoxSpec, column: TypedColumn): (i: number) => boolean {
  const texts = new Set(spec.status.event.map((v) => String(v).trim()));
  const numbers = spec.status.event
    .map((v) => (typeof v === "number" ? v : parseNumber(v)))
    .filter((v): v is number => v !== null);
  if (column instanceof Float64Array) {
    // a typed number is its own value; its text is the shortest round-trip form
    return (i) => numbers.includes(column[i]) || texts.has(String(column[i]));
  }
  return (i) => {
    const t = (column[i] ?? "").trim();
    if (texts.has(t)) return true;
    const v = parseNumber(t);
    return v !== null && numbers.includes(v);
  };
}

/** Relative and absolute tolerance under which two distinct times count as tied: √(double epsilon). */
const TIE_TOLERANCE = Math.sqrt(2.220446049250313e-16);

/**
 * Times that differ only by rounding (0.1 + 0.2 against 0.3) count as tied: distinct sorted
 * times whose gap is at most the tolerance, absolutely or relative to the mean |time|, take the
 * first time of their run, the rule of R's survival package (aeqSurv, on by default in coxph,
 * survfit and survdiff) so that the same data give the same risk sets.
 */
export function mergeNearTies(times: Float64Array): Float64Array {
  const unique = [...new Set(times)].sort((a, b) => a - b);
  if (unique.length < 2) return times;
  const mean = unique.reduce((s, v) => s + Math.abs(v), 0) / unique.length;
  const replace = new Map<number, number>();
  let cut = unique[0];
  for (let k = 1; k < unique.length; k++) {
    const gap = unique[k] - unique[k - 1];
    if (gap <= TIE_TOLERANCE || gap / mean <= TIE_TOLERANCE) replace.set(unique[k], cut);
    else cut = unique[k];
  }
  if (replace.size === 0) return times;
  return times.map((t) => replace.get(t) ?? t);
}

/** Reads and checks the data of a Cox model; throws EngineError naming the column and row. */
export function prepareCoxData(spec: CoxSpec, table: DataTable): PreparedCox {
  const extra = [spec.status.column, ...spec.strata, ...(spec.cluster ? [spec.cluster] : [])];
  for (const name of extra) {
    if (!(name in table.columns)) throw new EngineError(`column "${name}" is missing from the data`);
  }
  for (const s of spec.strata) {
    if (s === spec.response) throw new EngineError(`strata column "${s}" is the time column`);
    if (spec.terms.some((t) => "variable" in t && t.variable === s)) {
      throw new EngineError(
        `strata column "${s}" is also listed as a term; a stratified variable has no coefficient`,
      );
    }
  }
  // rows missing status, a stratum or the cluster are left out before the design reads the rest
  const keep: number[] = [];
  const excludedEarly: number[] = [];
  for (let i = 0; i < table.nRows; i++) {
    if (extra.some((name) => isMissingAt(table.columns[name], i))) excludedEarly.push(table.rowNumbers[i]);
    else keep.push(i);
  }
  const columns: Record<string, TypedColumn> = {};
  for (const name of table.names)
    columns[name] = keep.length === table.nRows ? table.columns[name] : selectRows(table.columns[name], keep);
  const kept: DataTable = {
    names: table.names,
    columns,
    nRows: keep.length,
    rowNumbers: keep.map((i) => table.rowNumbers[i]),
  };

  const designSpec: ModelSpec = {
    response: spec.response,
    family: "gaussian",
    intercept: false,
    terms: spec.terms,
    ...(spec.weights ? { weights: spec.weights } : {}),
    ...(spec.offset ? { offset: spec.offset } : {}),
    ...(spec.id ? { id: spec.id } : {}),
    ...(spec.treatment ? { treatment: spec.treatment } : {}),
  };
  const prepared = prepareData(designSpec, kept, { oneRowPerSubject: false });
  const design = buildDesign(designSpec, prepared);
  const n = design.n;
  const p = design.p;
  if (n === 0) throw new EngineError("no rows are left after leaving out rows with a missing cell");
  const rowOf = (k: number) => kept.rowNumbers[prepared.used[k]];

  const time = mergeNearTies(prepared.response);
  for (let k = 0; k < n; k++) {
    if (time[k] < 0)
      throw new EngineError(
        `time column "${spec.response}" has a negative time (${time[k]}) at data row ${rowOf(k)}`,
      );
  }
  const isEvent = statusMatcher(spec, kept.columns[spec.status.column]);
  const status = new Uint8Array(n);
  let events = 0;
  for (let k = 0; k < n; k++) {
    status[k] = isEvent(prepared.used[k]) ? 1 : 0;
    events += status[k];
  }
  if (events === 0) {
    throw new EngineError(
      `status column "${spec.status.column}" has no value among ${spec.status.event.map((v) => `"${v}"`).join(", ")} in the rows used, so there are no events to model`,
    );
  }

  const labelOf = (k: number) =>
    spec.strata.map((s) => levelName(s, cellText(kept.columns[s], prepared.used[k]).trim())).join(", ");
  const labels = [...new Set(Array.from({ length: n }, (_, k) => labelOf(k)))].sort();
  const labelIndex = new Map(labels.map((l, i) => [l, i]));
  const stratum = Int32Array.from({ length: n }, (_, k) => labelIndex.get(labelOf(k)) as number);

  const means = new Float64Array(p);
  const x = new Float64Array(design.x);
  for (let j = 0; j < p; j++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += x[j * n + i];
    means[j] = s / n;
    for (let i = 0; i < n; i++) x[j * n + i] -= means[j];
  }

  const order = Int32Array.from({ length: n }, (_, i) => i).sort(
    (a, b) => stratum[a] - stratum[b] || time[a] - time[b] || status[b] - status[a] || a - b,
  );
  const blocks: TimeBlock[] = [];
  for (let s = 0; s < n;) {
    let e = s + 1;
    while (e < n && stratum[order[e]] === stratum[order[s]] && time[order[e]] === time[order[s]]) e++;
    const deaths: number[] = [];
    for (let q = s; q < e; q++) if (status[order[q]] === 1) deaths.push(q);
    blocks.push({ stratum: stratum[order[s]], time: time[order[s]], start: s, end: e, deaths });
    s = e;
  }
  const cluster = spec.cluster
    ? Array.from(prepared.used, (i) => cellText(kept.columns[spec.cluster as string], i).trim())
    : null;

  return {
    data: {
      n,
      p,
      x,
      means,
      time,
      status,
      weight: prepared.weights ?? new Float64Array(n).fill(1),
      offset: prepared.offset ?? new Float64Array(n),
      stratum,
      strataLabels: labels,
      order,
      blocks,
      cluster,
      weighted: prepared.weights !== null,
    },
    prepared,
    design,
    designSpec,
    excludedRows: [...excludedEarly, ...prepared.excludedRows].sort((a, b) => a - b),
  };
}
