/**
 * An upload's reading as a task for the compute threads: reads and checks the work file
 * (`parseDatasetFile`: every refusal names the file, column and row), screens every value for
 * identifiers, turns the cells into the typed columns the store keeps and writes them as the
 * Arrow work file, and compares them with the latest locked version's columns. Answers what the
 * web process records (column metadata, key, screen hits, the change summary), never the cells:
 * reading a 1 000 000-row file held the web process's event loop for a minute. No database: the
 * caller looks up the versions, moves the files into the store and writes the rows.
 *
 * A file-system error (a full disk) is answered as a value with its code, so that the caller
 * words it as a storage refusal as before (an error's own fields do not cross threads).
 */
import type { MessagePort } from "node:worker_threads";
import type { ChangeSummary } from "~/shared/datasets";
import { readArrowColumnsCached, textOf, writeArrowColumns } from "../datasets/arrow-columns.server";
import { summariseChanges } from "../datasets/diff";
import {
  parseDatasetFile,
  type DatasetFormat,
  type ParseOptions,
  type ParsedDataset,
} from "../datasets/parse.server";
import { storedColumnsFromParsed } from "../datasets/parsed-columns";
import { screenColumns, type ScreenHit } from "../datasets/screen";
import type { ColumnMeta } from "../datasets/column-summary";

export interface UploadTaskInput {
  workPath: string;
  fileName: string;
  format: DatasetFormat;
  options: Omit<ParseOptions, "onProgress">;
  /** Where to write the typed columns (an Arrow work file), or null to read and check only. */
  columnsWork: string | null;
  /** The dataset's latest locked version, to compare with. */
  previous: { version: number; columnsFile: string; keyColumns: string[] } | null;
  /** In a thread: where the reading's progress (a fraction) is posted. */
  progressPort?: MessagePort;
}

export type UploadTaskOutput =
  | { ok: false; problems: string[] }
  | { ok: false; error: { message: string; code?: string } }
  | {
      ok: true;
      dataset: Omit<ParsedDataset, "cells">;
      hits: ScreenHit[];
      changes: ChangeSummary | null;
    };

export async function uploadTask(
  input: UploadTaskInput,
  onProgress: (fraction: number) => void = (f) => input.progressPort?.postMessage(f),
): Promise<UploadTaskOutput> {
  try {
    const outcome = await parseDatasetFile(input.workPath, input.fileName, input.format, {
      ...input.options,
      onProgress,
    });
    if (!outcome.ok) return outcome;
    const parsed = outcome.dataset;
    const { cells, ...dataset } = parsed;
    if (!input.columnsWork) return { ok: true, dataset, hits: [], changes: null };
    const hits = screenColumns(
      parsed.names.map((name, j) => {
        // `format` is set by readers of files that declare one (SAS formats of transport files).
        const meta = parsed.columns[j] as ColumnMeta & { format?: string | null };
        return { name, type: meta.type, cells: cells[j], label: meta.label, format: meta.format ?? null };
      }),
    );
    const stored = storedColumnsFromParsed(parsed);
    let changes: ChangeSummary | null = null;
    if (input.previous) {
      // Both sides as the stored typed columns give them, so "1.50" and "1.5" are the same value.
      const before = await readArrowColumnsCached(input.previous.columnsFile);
      changes = summariseChanges(
        {
          version: input.previous.version,
          names: before.names,
          cells: before.columns.map(textOf),
          keyColumns: input.previous.keyColumns,
        },
        { names: parsed.names, cells: stored.columns.map(textOf), keyColumns: parsed.keyColumns },
      );
    }
    await writeArrowColumns(input.columnsWork, stored);
    return { ok: true, dataset, hits, changes };
  } catch (e) {
    const code = (e as NodeJS.ErrnoException | null)?.code;
    return {
      ok: false,
      error: { message: e instanceof Error ? e.message : String(e), ...(code ? { code } : {}) },
    };
  } finally {
    input.progressPort?.close();
  }
}
