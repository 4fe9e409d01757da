/**
 * Inputs of the influence what-if: the rerun's design rebuilt from its own rows, so the browser
 * can recompute the treatment contrast without chosen subjects in closed form
 * (app/engine/case-deletion.ts). Nothing is stored: a what-if becomes a result only when it is
 * kept as a sensitivity rerun.
 */
import type { WhatIfCandidate, WhatIfInputs } from "~/components/figures/what-if-inputs";
import { CHECK_BY_KEY, type CheckKey } from "~/engine/checks";
import { selectRows, toDataTable, type ColumnTable, type TypedColumn } from "~/engine/data";
import { buildDesign, prepareData } from "~/engine/design";
import { EngineError, RESULTS_CAUTION, type LinearModelResult } from "~/engine";
import type { RepeatedResult } from "~/engine/repeated/repeated-model";
import { leastSquares } from "~/engine/least-squares";
import { LRUCache } from "lru-cache";
import type { RerunDocument } from "./reruns.server";
import { selectPopulation } from "~/engine/population";
import { conditionsOfDocument } from "./rerun-population";

/** The engine's table input: cells as text by column (or typed columns, `C`), 1-based data rows. */
export interface RerunTable<C extends TypedColumn = string[]> {
  columns: Record<string, C>;
  rowNumbers: number[];
}

/** Candidates shown in the panel: the most influential flagged subjects by Cook's distance. */
export const WHAT_IF_CANDIDATES = 30;

const INFLUENCE_CHECKS: readonly CheckKey[] = [
  "cooks_distance",
  "leverage",
  "deletion_residual",
  "dfbetas_treatment",
  "dffits",
];

function keepRows<C extends TypedColumn>(table: RerunTable<C>, keep: (i: number) => boolean): RerunTable<C> {
  const idx: number[] = [];
  for (let i = 0; i < table.rowNumbers.length; i++) if (keep(i)) idx.push(i);
  const columns: Record<string, C> = {};
  for (const [k, v] of Object.entries(table.columns)) columns[k] = selectRows(v, idx) as C;
  return { columns, rowNumbers: idx.map((i) => table.rowNumbers[i]) };
}

/**
 * The rows a rerun read: the locked table filtered to the rerun's population, less the rows its
 * options excluded (the same steps as computeRerun in reruns.server.ts). Rows with a missing
 * cell stay; the engine leaves them out itself, as in the rerun.
 */
export function rerunTable<C extends TypedColumn = string[]>(
  doc: RerunDocument,
  table: RerunTable<C>,
): RerunTable<C> {
  let working = selectPopulation(table, conditionsOfDocument(doc.population)).table;
  if (doc.options.variant === "exclude_rows") {
    const drop = new Set(doc.options.rows);
    const rows = working.rowNumbers;
    working = keepRows(working, (i) => !drop.has(rows[i]));
  }
  return working;
}

/**
 * Why a list of rows cannot be excluded from a rerun, or null when it can: every row must be
 * one of the subjects the rerun analysed (1-based data rows of the locked file), each once,
 * and at least one must stay. Checked before a sensitivity rerun is queued, so an exclusion
 * never names rows that would change nothing (and is never labelled by a wrong count).
 */
export function exclusionProblem(
  doc: RerunDocument,
  rows: readonly number[],
  subjects?: number,
): string | null {
  if (rows.length === 0) return "Choose at least one subject to exclude.";
  if (doc.result.kind === "repeated") return repeatedExclusionProblem(doc.result, rows, subjects);
  const analysed = new Set(doc.result.observations.row);
  const seen = new Set<number>();
  for (const row of rows) {
    if (!Number.isInteger(row) || !analysed.has(row)) {
      return `Row ${row} is not one of the ${analysed.size} subjects this rerun analysed (rows are numbered from 1 in the locked file). Choose subjects from the what-if list.`;
    }
    if (seen.has(row)) return `Row ${row} is named twice; name each subject once.`;
    seen.add(row);
  }
  if (seen.size >= analysed.size)
    return "Excluding every subject leaves nothing to fit; keep at least one subject.";
  return null;
}

/**
 * The same for a repeated-measures rerun, whose subjects have several records: every row must be
 * a record it analysed, each subject is left out with all of its records, `subjects` counts them,
 * and at least one subject stays.
 */
function repeatedExclusionProblem(
  r: RepeatedResult,
  rows: readonly number[],
  subjects: number | undefined,
): string | null {
  if (subjects === undefined)
    return "A repeated-measures model leaves out subjects with all of their records, through the plan's exclusion of influential subjects; rows chosen one by one do not apply.";
  const subjectOf = new Map<number, string>();
  const recordsOf = new Map<string, number>();
  r.observations.row.forEach((row, i) => {
    const id = r.observations.id[i];
    subjectOf.set(row, id);
    recordsOf.set(id, (recordsOf.get(id) ?? 0) + 1);
  });
  const seen = new Set<number>();
  const named = new Map<string, number>();
  for (const row of rows) {
    const id = subjectOf.get(row);
    if (!Number.isInteger(row) || id === undefined)
      return `Row ${row} is not one of the ${subjectOf.size} records this rerun analysed (rows are numbered from 1 in the locked file).`;
    if (seen.has(row)) return `Row ${row} is named twice; name each record once.`;
    seen.add(row);
    named.set(id, (named.get(id) ?? 0) + 1);
  }
  for (const [id, count] of named) {
    if (count !== recordsOf.get(id))
      return `Row ${rows.find((row) => subjectOf.get(row) === id)} is one of ${recordsOf.get(id)} records of a subject, of which ${count} are named; a subject is left out with all of its records.`;
  }
  if (named.size !== subjects)
    return `The rows are the records of ${named.size} subject${named.size === 1 ? "" : "s"}, not ${subjects}.`;
  if (named.size >= recordsOf.size)
    return "Excluding every subject leaves nothing to fit; keep at least one subject.";
  return null;
}

function unavailable(reason: string): WhatIfInputs {
  return { available: false, reason, caution: RESULTS_CAUTION };
}

const relClose = (a: number, b: number, tol: number) =>
  Math.abs(a - b) <= tol * Math.max(1, Math.abs(a), Math.abs(b));

export interface WhatIfOptions {
  /** The plan names exclusion of influential subjects among its sensitivity analyses. */
  prespecifiedExclusion?: boolean;
  /** Name subjects by id (staff); otherwise by rank only. Default true. */
  withSubjectIds?: boolean;
  /** The viewer may start reruns (the "keep as a sensitivity rerun" button). Default true. */
  canSave?: boolean;
}

/** What-if inputs of completed reruns by result hash and options: building them refits the model (30–90 ms at 10 000 subjects). */
const kept = new LRUCache<string, WhatIfInputs>({ max: 32 });

/**
 * The what-if inputs of a completed rerun, built once per result hash and options; `table` is
 * asked for only when they are not kept yet (it reads the locked dataset).
 */
export async function keptWhatIfInputs(
  rerun: { id: string; resultSha256: string | null },
  doc: RerunDocument,
  table: () => Promise<RerunTable>,
  options: WhatIfOptions = {},
): Promise<WhatIfInputs> {
  return keptOrBuilt(rerun, options, async () => whatIfInputs(doc, await table(), options));
}

/**
 * What-if inputs made for a viewer who sees subjects and may start reruns (as the compute thread
 * stores them, derive-page.ts), shaped for this viewer: candidates by rank only without subjects,
 * and the plan's and viewer's flags. The same as `whatIfInputs` with these options.
 */
export function whatIfFor(inputs: WhatIfInputs, options: WhatIfOptions): WhatIfInputs {
  if (!inputs.available) return inputs;
  const withIds = options.withSubjectIds ?? true;
  return {
    ...inputs,
    candidates: withIds ? inputs.candidates : inputs.candidates.map((c) => ({ ...c, subject: null })),
    prespecifiedExclusion: options.prespecifiedExclusion ?? false,
    canSave: options.canSave ?? true,
  };
}

/** What-if inputs kept by result hash and options, else made by `build` (here, or in a compute thread) and kept. */
export async function keptOrBuilt(
  rerun: { id: string; resultSha256: string | null },
  options: WhatIfOptions,
  build: () => Promise<WhatIfInputs>,
): Promise<WhatIfInputs> {
  const key = JSON.stringify([
    rerun.id,
    rerun.resultSha256,
    options.prespecifiedExclusion ?? false,
    options.withSubjectIds ?? true,
    options.canSave ?? true,
  ]);
  const hit = kept.get(key);
  if (hit) return hit;
  const inputs = await build();
  kept.set(key, inputs);
  return inputs;
}

/**
 * Builds the what-if inputs from a stored rerun and its rows (`rerunTable(doc, locked.table)`).
 * Restricted to models without treatment interactions: there the contrast of adjusted means is
 * the treatment coefficient itself, so its vector L does not move when subjects are left out
 * (with interactions it depends on covariate means, which do).
 */
export function whatIfInputs(
  doc: RerunDocument,
  table: ColumnTable,
  options: WhatIfOptions = {},
): WhatIfInputs {
  if (doc.result.kind === "cox")
    return unavailable(
      "The closed-form what-if is offered for linear models; this rerun is a time-to-event (Cox) model. Use a sensitivity rerun excluding the subjects.",
    );
  if (doc.result.kind === "repeated")
    return unavailable(
      "The closed-form what-if is offered for linear models; this rerun is a repeated-measures (MMRM) model, whose subjects have several correlated records. Use the plan's exclusion of influential subjects, a sensitivity rerun leaving out all of their records.",
    );
  if (doc.result.kind !== "linear")
    return unavailable(
      "The closed-form what-if is offered for linear models; this rerun is a generalized linear model. Use a sensitivity rerun excluding the subjects.",
    );
  const r = doc.result;
  const spec = r.spec;
  const treatment = spec.treatment;
  if (!treatment)
    return unavailable("The model names no treatment, so there is no treatment contrast to follow.");
  if (spec.terms.some((t) => "interaction" in t && t.interaction.includes(treatment))) {
    return unavailable(
      "The model has treatment interactions: its adjusted-mean contrast depends on covariate means that change when subjects are left out, so the closed-form what-if is not offered. Use a sensitivity rerun excluding the subjects.",
    );
  }
  const candidates = candidateRows({ ...doc, result: r }, options.withSubjectIds ?? true);
  if (candidates.length === 0) return unavailable("No influence check of the plan flagged any subject.");

  let data;
  let design;
  try {
    data = prepareData(spec, toDataTable(table));
    design = buildDesign(spec, data);
  } catch (e) {
    if (e instanceof EngineError)
      return unavailable(`The rerun's rows could not be read again: ${e.message}.`);
    throw e;
  }
  const rows = data.used.length;
  if (rows !== r.n || Array.from(data.used).some((u, k) => data.rowNumbers[u] !== r.observations.row[k])) {
    return unavailable(
      "The rows given do not match the rerun's rows; build them with rerunTable from the rerun's locked dataset version.",
    );
  }
  const { n, p } = design;
  const weights = r.observations.weight ? Float64Array.from(r.observations.weight) : null;
  const outcome = leastSquares({ x: design.x, n, p, y: data.response, weights, offset: data.offset });
  if (!outcome.ok)
    return unavailable("The design's columns are aliased; the what-if needs an estimable model.");
  const fit = outcome.fit;
  for (let j = 0; j < p; j++) {
    if (!relClose(fit.coefficients[j], r.coefficients[j].estimate, 1e-8)) {
      return unavailable(
        "Refitting the rerun's rows does not reproduce its stored coefficients; the what-if is not offered.",
      );
    }
  }

  // contrast vectors: unit vectors on the treatment's indicator columns (no treatment interactions)
  const tv = data.variables.get(treatment);
  if (!tv || tv.kind !== "categorical")
    return unavailable(`The treatment "${treatment}" is not categorical.`);
  const contrasts = tv.levels.flatMap((level, li) => {
    if (li === tv.referenceIndex) return [];
    const j = design.columnFactors.findIndex(
      (fs) => fs.length === 1 && fs[0].variable === treatment && fs[0].level === li,
    );
    if (j < 0) return [];
    const l = Array.from({ length: p }, (_, k) => (k === j ? 1 : 0));
    return [{ label: `${level} vs ${tv.reference}`, l }];
  });
  for (const c of contrasts) {
    const stored = r.contrasts?.find((s) => s.label === c.label);
    const est = c.l.reduce((s: number, v: number, k: number) => s + v * fit.coefficients[k], 0);
    if (stored && !relClose(stored.estimate, est, 1e-8)) {
      return unavailable(
        `The stored contrast ${c.label} is not the treatment coefficient; the closed-form what-if does not apply.`,
      );
    }
  }

  // candidate rows of √W X and weighted residuals
  const position = new Map<number, number>();
  r.observations.row.forEach((row, k) => position.set(row, k));
  const shaped: WhatIfCandidate[] = candidates.map((c) => {
    const k = position.get(c.row) as number;
    const sw = weights ? Math.sqrt(weights[k]) : 1;
    const x = Array.from({ length: p }, (_, j) => design.x[j * n + k] * sw);
    return { ...c, x, residual: fit.weightedResiduals[k] };
  });

  const unscaled: number[] = [];
  for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) unscaled.push(fit.unscaledCovariance[b * p + a]);

  const notes: string[] = [];
  if (weights) {
    notes.push(
      r.method.kind === "estimated-variance"
        ? "The estimated weights are held at their values from all subjects; a sensitivity rerun re-estimates them."
        : "Prior weights enter as √w-scaled rows.",
    );
  }
  if (r.covarianceType !== "model")
    notes.push(`Standard errors here are model-based; the rerun reports ${r.covarianceType} errors.`);
  const flaggedCount = new Set(
    doc.checks
      .filter((c) => INFLUENCE_CHECKS.includes(c.key))
      .flatMap((c) => (c.flagged ?? []).map((f) => f.row)),
  ).size;
  if (flaggedCount > shaped.length)
    notes.push(
      `${flaggedCount} subjects were flagged; the ${shaped.length} with the largest Cook's distance are offered.`,
    );

  return {
    available: true,
    caution: RESULTS_CAUTION,
    full: { n, p, coefficients: Array.from(fit.coefficients), unscaledCovariance: unscaled, rss: fit.rss },
    coefficientNames: [...design.names],
    contrasts,
    candidates: shaped,
    flaggedCount,
    prespecifiedExclusion: options.prespecifiedExclusion ?? false,
    prespecifiedRows: (doc.checks.find((c) => c.key === "cooks_distance")?.flagged ?? [])
      .map((f) => f.row)
      .sort((a, b) => a - b),
    canSave: options.canSave ?? true,
    notes,
  };
}

/** Subjects flagged by any influence check, by Cook's distance, at most WHAT_IF_CANDIDATES. */
function candidateRows(
  doc: RerunDocument & { result: LinearModelResult },
  withIds: boolean,
): Omit<WhatIfCandidate, "x" | "residual">[] {
  const obs = doc.result.observations;
  const byRow = new Map<number, string[]>();
  for (const c of doc.checks) {
    if (!INFLUENCE_CHECKS.includes(c.key)) continue;
    const label = CHECK_BY_KEY.get(c.key)?.label ?? c.label;
    for (const f of c.flagged ?? []) byRow.set(f.row, [...(byRow.get(f.row) ?? []), label]);
  }
  const position = new Map<number, number>();
  obs.row.forEach((row, k) => position.set(row, k));
  const list = [...byRow.entries()]
    .map(([row, flaggedBy]) => ({ row, flaggedBy, k: position.get(row) }))
    .filter((c): c is { row: number; flaggedBy: string[]; k: number } => c.k !== undefined)
    .sort((a, b) => obs.cooksDistance[b.k] - obs.cooksDistance[a.k] || a.row - b.row)
    .slice(0, WHAT_IF_CANDIDATES);
  return list.map((c, i) => ({
    row: c.row,
    subject: withIds ? (obs.id[c.k] ?? `row ${c.row}`) : null,
    rank: i + 1,
    cooks: obs.cooksDistance[c.k],
    leverage: obs.leverage[c.k],
    deletionResidual: obs.studentizedExternal[c.k],
    flaggedBy: c.flaggedBy,
  }));
}
