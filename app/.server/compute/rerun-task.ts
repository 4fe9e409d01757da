/**
 * A rerun's computation as a task for the compute threads: reads the locked version's Arrow
 * columns file (typed columns as stored, no cell text parsed), runs `computeRerun`, writes the
 * canonical JSON of the document to its content-addressed file (`result-files.ts`) and answers
 * its SHA-256 with the few parts the web process needs: the checks (for the findings), the
 * reproduction and the subjects the document names (for the notification's check), never the
 * document itself: a 1 000 000-subject result is hundreds of MB, and receiving it, parsing it or
 * writing it into SQLite held the web process's event loop for seconds. No database: the caller
 * reads and writes the rows. An `EngineError` is answered as a value (its class does not cross
 * threads).
 */
import { createHash } from "node:crypto";
import type { CheckOutcome } from "~/engine/checks";
import type { ReproductionResult } from "~/engine/reproduction";
import { EngineError } from "~/engine/errors";
import { readArrowColumnsCached } from "../datasets/arrow-columns.server";
import type { StoredPlannedModel } from "../plans/plans.server";
import { computeRerun, type RerunTable } from "../reruns/compute-rerun";
import { subjectIdsOf } from "../reruns/document-subjects";
import { encodeResult, writeResultFile } from "../reruns/result-files";
import { storePageDerived } from "../reruns/derive-page";
import type { RerunOptions } from "../reruns/rerun-options";

export interface RerunTaskInput {
  model: StoredPlannedModel;
  /** Absolute path of the version's Arrow columns file. */
  columnsFile: string;
  options: RerunOptions;
  meta: { datasetSha256: string; planVersionId: string };
  /** Absolute DATA_DIR: the result is written under it (results/<aa>/<sha256>.json). */
  dataDir: string;
}

export type RerunTaskOutput =
  | {
      ok: true;
      sha256: string;
      /** The stored result's size in bytes. */
      bytes: number;
      engineVersion: string;
      checks: CheckOutcome[];
      reproduction?: ReproductionResult;
      /** Every subject id the document names, one a line (one string crosses threads cheaply). */
      subjectIds: string;
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
    const { bytes, sha256 } = encodeResult(doc);
    await writeResultFile(input.dataDir, sha256, bytes);
    // what the results page reads, beside the result, so its first load need not parse the whole document
    await storePageDerived(input.dataDir, sha256, doc, table);
    return {
      ok: true,
      sha256,
      bytes: bytes.length,
      engineVersion: doc.engineVersion,
      checks: doc.checks,
      ...(doc.reproduction ? { reproduction: doc.reproduction } : {}),
      subjectIds: [...subjectIdsOf(doc)].join("\n"),
    };
  } catch (e) {
    if (e instanceof EngineError) return { ok: false, engineError: e.message };
    throw e;
  }
}
