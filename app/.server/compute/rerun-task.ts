/**
 * A rerun's computation as a task for the compute threads: reads the locked version's Arrow
 * columns file (typed columns as stored, no cell text parsed), runs `computeRerun`, and answers
 * the canonical JSON of the document with its SHA-256. No database: the caller reads and writes
 * the rows. An `EngineError` is answered as a value (its class does not cross threads).
 */
import { createHash } from "node:crypto";
import type { CheckOutcome } from "~/engine/checks";
import type { ReproductionResult } from "~/engine/reproduction";
import { EngineError } from "~/engine/errors";
import { canonicalJson } from "../canonical-json";
import { readArrowColumnsCached } from "../datasets/arrow-columns.server";
import type { StoredPlannedModel } from "../plans/plans.server";
import { computeRerun, type RerunTable } from "../reruns/compute-rerun";
import type { RerunOptions } from "../reruns/rerun-options";

export interface RerunTaskInput {
  model: StoredPlannedModel;
  /** Absolute path of the version's Arrow columns file. */
  columnsFile: string;
  options: RerunOptions;
  meta: { datasetSha256: string; planVersionId: string };
}

export type RerunTaskOutput =
  | {
      ok: true;
      json: string;
      sha256: string;
      engineVersion: string;
      checks: CheckOutcome[];
      reproduction?: ReproductionResult;
    }
  | { ok: false; engineError: string };

export function sha256Hex(text: string): string {
  return createHash("sha256").update(text).digest("hex");
}

export async function rerunTask(input: RerunTaskInput): Promise<RerunTaskOutput> {
  const stored = await readArrowColumnsCached(input.columnsFile);
  const table: RerunTable = { columns: {}, rowNumbers: stored.rowNumbers };
  stored.names.forEach((name, i) => (table.columns[name] = stored.columns[i]));
  try {
    const doc = computeRerun(input.model, table, input.options, input.meta);
    const json = canonicalJson(doc);
    return {
      ok: true,
      json,
      sha256: sha256Hex(json),
      engineVersion: doc.engineVersion,
      checks: doc.checks,
      ...(doc.reproduction ? { reproduction: doc.reproduction } : {}),
    };
  } catch (e) {
    if (e instanceof EngineError) return { ok: false, engineError: e.message };
    throw e;
  }
}
