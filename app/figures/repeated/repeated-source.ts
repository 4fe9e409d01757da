/**
 * What the repeated-measures (MMRM) figure modules share: the repeated result of a rerun, the part
 * of the data every figure carries, who a record or subject is for the viewer, and which subjects
 * the plan's influence check flagged. Pure.
 */
import type { FigureKey } from "~/engine/checks";
import type { RepeatedResult } from "~/engine/repeated/repeated-model";
import {
  checkOf,
  FigureUnavailableError,
  unitOf,
  type FigureOptions,
  type FigureSource,
} from "../shared/source";
import { BEYOND, type FigureBase, type SubjectRef } from "../shared/types";

/** The repeated-measures result of a rerun; other models have figures of their own. */
export function repeatedResult(source: FigureSource, figure: FigureKey): RepeatedResult {
  if (source.result.kind !== "repeated")
    throw new FigureUnavailableError(
      `the ${figure} figure is drawn for repeated-measures models only; this rerun fits ${source.result.kind === "cox" ? "a Cox model" : "a model without repeated visits"}`,
    );
  return source.result;
}

/** The shared part of a repeated-measures figure's data (n counts the records used). */
export function repeatedBase(r: RepeatedResult, opts: FigureOptions): FigureBase {
  return {
    n: r.n,
    withSubjectIds: opts.withSubjectIds,
    response: r.spec.response,
    responseUnit: unitOf(r.spec.response, opts),
    weighted: false,
  };
}

/** Who record i is: its subject and data row, only for viewers who may see subjects. */
export function recordRef(r: RepeatedResult, i: number, withIds: boolean): SubjectRef {
  if (!withIds) return { subject: null, row: null };
  return { subject: r.observations.id[i], row: r.observations.row[i] };
}

/**
 * The subjects the plan's influence check flagged, by id (a flagged entry names its subject, or a
 * data row of the subject when it has no id).
 */
export function flaggedSubjects(source: FigureSource, r: RepeatedResult): Set<string> {
  const c = checkOf(source, "repeated_influence");
  const byRow = new Map(r.observations.row.map((row, i) => [row, r.observations.id[i]]));
  const out = new Set<string>();
  for (const f of c?.flagged ?? []) {
    const id = f.id ?? byRow.get(f.row);
    if (id !== undefined) out.add(id);
  }
  return out;
}

/** The normalized residual's name in hover tables, and on axes with its unit. */
export const NORMALIZED = "Normalized residual";
export const NORMALIZED_AXIS = "Normalized residual (standard units, z)";

/** The alt text's sentence on the records of subjects beyond the influence threshold. */
export function recordsMarked(rows: readonly { status: string }[]): string {
  const beyond = rows.filter((row) => row.status === BEYOND).length;
  return `${beyond} record${beyond === 1 ? " is" : "s are"} drawn as open triangles for belonging to a subject beyond the influence threshold.`;
}
