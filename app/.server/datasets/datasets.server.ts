/**
 * The data manager's service: upload (check, screen, compare, store). Screen decisions, column
 * removal, lock and purge are in dataset-decisions.server.ts, the reads behind the datasets
 * pages in dataset-reads.server.ts. Every change of state is one write transaction with its
 * audit event.
 */
import { createHash } from "node:crypto";
import { writeFile } from "node:fs/promises";
import { and, desc, eq, isNull } from "drizzle-orm";
import { appendAudit, type Actor } from "../audit.server";
import { db, isoNow, newId, t, writeTransaction } from "../db/index.server";
import type { ChangeSummary } from "./diff";
import { firstBytesOf, formatOf, type DatasetFormat } from "./parse.server";
import { isStorageError } from "../storage-errors.server";
import { auditUploadRefusal, storageRefusal } from "./upload.server";
import { columnsFileOf } from "./stored-columns.server";
import { runUploadTask } from "../compute/pool.server";
import { latestLocked } from "./dataset-versions.server";
import {
  absoluteStorePath,
  blobRelativePath,
  columnsRelativePath,
  moveIntoStore,
  newWorkPath,
  removeQuietly,
  sweepDatasetLeftovers,
} from "./store.server";

export type { ChangeSummary } from "./diff";
export { sha256OfFile } from "./store.server";
export type { DatasetVersionRow, ScreenHitRow } from "./dataset-versions.server";
// The reads and the decisions live in files of their own; re-exported here for the tests and
// scripts that load the whole service.
export * from "./dataset-reads.server";
export * from "./dataset-decisions.server";

/** Dataset names: a letter, then letters, digits or underscores (as dataset names in a SAP). */
export const DATASET_NAME = /^[A-Za-z][A-Za-z0-9_]{0,31}$/;

export interface UploadRequest {
  studyId: string;
  datasetName: string;
  fileName: string;
  /** The uploaded bytes, already streamed to a work file (see newWorkPath). */
  workPath: string;
  byteSize: number;
  sha256: string;
  keyColumns?: string[];
  numericColumns?: string[];
  /** Columns to read by their values rather than their declared type, and why (recorded in the audit trail). */
  readByValues?: { columns: string[]; reason: string };
}

export type UploadResult =
  | {
      ok: true;
      versionId: string;
      version: number;
      datasetId: string;
      hits: number;
      changes: ChangeSummary | null;
    }
  | { ok: false; problems: string[] };

export type Progress = (phase: "parse" | "screen" | "store", fraction: number) => void;

/** Store files some version still needs (a purged version needs none). */
async function referencedStorePaths(): Promise<Set<string>> {
  const rows = await db
    .select({ stored: t.datasetVersions.storedPath, parsed: t.datasetVersions.parsedPath })
    .from(t.datasetVersions)
    .where(isNull(t.datasetVersions.purgedAt));
  return new Set(rows.flatMap((r) => [r.stored, r.parsed ?? ""]).filter(Boolean));
}

/** Removes what interrupted uploads left behind (see store.server.ts). */
export async function sweepLeftovers(graceMs?: number): Promise<string[]> {
  return sweepDatasetLeftovers(await referencedStorePaths(), graceMs);
}

/**
 * Checks an uploaded file and, when it passes, stores it as the next draft version of the
 * named dataset. On any problem nothing is stored: the work file is removed and the problems
 * are returned (and recorded in the audit trail as a refused upload).
 */
export async function uploadDataset(
  actor: Actor,
  req: UploadRequest,
  progress: Progress = () => undefined,
): Promise<UploadResult> {
  let columnsWork: string | null = null;
  const placed: string[] = [];
  try {
    await sweepLeftovers().catch(() => undefined);
    const format: DatasetFormat = formatOf(req.fileName, await firstBytesOf(req.workPath));
    const options = {
      keyColumns: req.keyColumns,
      numericColumns: req.numericColumns,
      readByValues: req.readByValues?.columns,
    };
    const [existing] = await db
      .select()
      .from(t.datasets)
      .where(and(eq(t.datasets.studyId, req.studyId), eq(t.datasets.name, req.datasetName)))
      .limit(1);
    const [same] = existing
      ? await db
          .select({ version: t.datasetVersions.version, status: t.datasetVersions.status })
          .from(t.datasetVersions)
          .where(
            and(
              eq(t.datasetVersions.datasetId, existing.id),
              eq(t.datasetVersions.sha256, req.sha256),
              isNull(t.datasetVersions.purgedAt),
            ),
          )
          .orderBy(desc(t.datasetVersions.version))
          .limit(1)
      : [];
    const previous = existing && !same ? await latestLocked(existing.id) : null;
    if (!same) columnsWork = await newWorkPath("arrow");
    // Reading, checking, screening and the typed columns run in a compute thread (upload-task.ts).
    const outcome = await runUploadTask(
      {
        workPath: req.workPath,
        fileName: req.fileName,
        format,
        options,
        columnsWork,
        previous: previous
          ? {
              version: previous.version,
              columnsFile: await columnsFileOf(previous),
              keyColumns: JSON.parse(previous.keyColumnsJson) as string[],
            }
          : null,
      },
      (f: number) => progress("parse", f),
    );
    if (!outcome.ok && "problems" in outcome) return await refuse(actor, req, outcome.problems);
    if (!outcome.ok) throw Object.assign(new Error(outcome.error.message), { code: outcome.error.code });
    const { dataset: parsed, hits, changes } = outcome;
    if (same) {
      return await refuse(actor, req, [
        `${req.fileName} is byte for byte the same as version ${same.version} of ${req.datasetName} (${same.status}). Nothing changed, so no new version was made.`,
      ]);
    }
    // screened and compared in the same task, after the reading
    progress("screen", 1);
    const carried = existing ? await resolutionsToCarry(existing.id) : new Map<string, CarriedResolution>();
    progress("store", 0);
    const storedPath = blobRelativePath(req.sha256);
    const parsedPath = columnsRelativePath(req.sha256);
    if (await moveIntoStore(req.workPath, storedPath)) placed.push(storedPath);
    if (await moveIntoStore(columnsWork as string, parsedPath)) placed.push(parsedPath);
    const saved = await writeTransaction(async (tx) => {
      let datasetId = existing?.id;
      if (!datasetId) {
        datasetId = newId();
        await tx
          .insert(t.datasets)
          .values({ id: datasetId, studyId: req.studyId, name: req.datasetName, createdBy: actor.id });
      }
      const [last] = await tx
        .select({ version: t.datasetVersions.version })
        .from(t.datasetVersions)
        .where(eq(t.datasetVersions.datasetId, datasetId))
        .orderBy(desc(t.datasetVersions.version))
        .limit(1);
      const version = (last?.version ?? 0) + 1;
      await tx
        .update(t.datasetVersions)
        .set({ status: "superseded" })
        .where(and(eq(t.datasetVersions.datasetId, datasetId), eq(t.datasetVersions.status, "draft")));
      const versionId = newId();
      await tx.insert(t.datasetVersions).values({
        id: versionId,
        datasetId,
        version,
        status: "draft",
        format,
        fileName: req.fileName,
        byteSize: req.byteSize,
        sha256: req.sha256,
        rowCount: parsed.rowNumbers.length,
        datasetLabel: parsed.datasetLabel ?? null,
        columnsJson: JSON.stringify(parsed.columns),
        keyColumnsJson: JSON.stringify(parsed.keyColumns),
        storedPath,
        parsedPath,
        changeSummaryJson: changes ? JSON.stringify(changes) : null,
        uploadedBy: actor.id,
        uploadedAt: isoNow(),
      });
      const carriedForward: string[] = [];
      for (const h of hits) {
        const earlier = carried.get(carryKey(h.column, h.rule));
        if (earlier) carriedForward.push(`${h.column}: ${h.rule} (from version ${earlier.version})`);
        await tx.insert(t.identifierScreenHits).values({
          id: newId(),
          datasetVersionId: versionId,
          column: h.column,
          rule: h.rule,
          maskedExamplesJson: JSON.stringify({
            label: h.ruleLabel,
            basis: h.basis,
            matches: h.matches,
            examples: h.maskedExamples,
          }),
          ...(earlier
            ? {
                resolution: "not_identifier" as const,
                rationale: earlier.rationale,
                resolvedBy: earlier.resolvedBy,
                resolvedAt: earlier.resolvedAt,
                carriedFromId: earlier.originId,
              }
            : {}),
        });
      }
      await appendAudit(
        {
          actor,
          action: "dataset.upload",
          entityType: "dataset_version",
          entityId: versionId,
          studyId: req.studyId,
          after: {
            dataset: req.datasetName,
            version,
            fileName: req.fileName,
            format,
            datasetLabel: parsed.datasetLabel ?? null,
            sha256: req.sha256,
            byteSize: req.byteSize,
            rows: parsed.rowNumbers.length,
            columns: parsed.names.length,
            keyColumns: parsed.keyColumns,
            keySource: parsed.keySource,
            ...(req.readByValues && req.readByValues.columns.length > 0
              ? { readByValues: req.readByValues }
              : {}),
            warnings: parsed.columns.flatMap((c) => c.warnings ?? []).slice(0, 20),
            screenHits: hits.map((h) => `${h.column}: ${h.rule}`),
            screenResolutionsCarriedForward: carriedForward,
            changes: changes
              ? {
                  rowsAdded: changes.rowsAdded,
                  rowsRemoved: changes.rowsRemoved,
                  rowsChanged: changes.rowsChanged,
                  columnsAdded: changes.columnsAdded,
                  columnsRemoved: changes.columnsRemoved,
                }
              : null,
          },
        },
        tx,
      );
      return { versionId, version, datasetId };
    });
    progress("store", 1);
    return { ok: true, ...saved, hits: hits.length, changes };
  } catch (e) {
    // Any failure (a reader that gave up, a full disk, a failed commit) is a refusal with nothing stored.
    await removeUnreferenced(placed);
    return await refuse(actor, req, [failureMessage(e, req.fileName)]);
  } finally {
    await removeQuietly(req.workPath);
    await removeQuietly(columnsWork);
  }
}

interface CarriedResolution {
  /** The hit where the resolution was first recorded (its author and date are kept). */
  originId: string;
  version: number;
  rationale: string | null;
  resolvedBy: string | null;
  resolvedAt: string | null;
}

const carryKey = (column: string, rule: string) => `${column}\u0000${rule}`;

/**
 * "Not an identifier" resolutions of the dataset's earlier versions, by column name and screen
 * category, newest first wins: a new version's hit with the same column and category starts
 * resolved, keeping the original author, date and reason (shown as carried forward).
 */
async function resolutionsToCarry(datasetId: string): Promise<Map<string, CarriedResolution>> {
  const rows = await db
    .select({ h: t.identifierScreenHits, version: t.datasetVersions.version })
    .from(t.identifierScreenHits)
    .innerJoin(t.datasetVersions, eq(t.datasetVersions.id, t.identifierScreenHits.datasetVersionId))
    .where(
      and(
        eq(t.datasetVersions.datasetId, datasetId),
        eq(t.identifierScreenHits.resolution, "not_identifier"),
      ),
    )
    .orderBy(desc(t.datasetVersions.version));
  const out = new Map<string, CarriedResolution>();
  for (const { h, version } of rows) {
    const k = carryKey(h.column, h.rule);
    if (out.has(k)) continue;
    out.set(k, {
      originId: h.carriedFromId ?? h.id,
      version,
      rationale: h.rationale,
      resolvedBy: h.resolvedBy,
      resolvedAt: h.resolvedAt,
    });
  }
  return out;
}

async function refuse(actor: Actor, req: UploadRequest, problems: string[]): Promise<UploadResult> {
  await auditUploadRefusal(
    actor,
    req.studyId,
    { dataset: req.datasetName, fileName: req.fileName, sha256: req.sha256, byteSize: req.byteSize },
    problems,
  );
  return { ok: false, problems };
}

/** The message of an upload that failed by an exception rather than a refusal of the reader. */
function failureMessage(e: unknown, fileName: string): string {
  if (isStorageError(e)) return storageRefusal(e, fileName).message;
  console.error(`Upload of ${fileName} failed:`, e);
  const why = e instanceof Error ? e.message : String(e);
  return `Plumbline could not read ${fileName}: ${why}. Nothing was stored. Check the file (or save it again from its source) and upload it again.`;
}

/** Store files this upload put in place, unless another version refers to them meanwhile. */
async function removeUnreferenced(placed: string[]): Promise<void> {
  if (placed.length === 0) return;
  const referenced = await referencedStorePaths().catch(() => null);
  if (!referenced) return; // the sweep removes them later
  for (const relative of placed)
    if (!referenced.has(relative)) await removeQuietly(absoluteStorePath(relative));
}

/**
 * Uploads bytes that are already in hand (the demo seed, scripts): writes them to a work file
 * and goes through the same checks as a browser upload.
 */
export async function uploadBytes(
  actor: Actor,
  input: Omit<UploadRequest, "workPath" | "byteSize" | "sha256"> & { bytes: Buffer | string },
  progress?: Progress,
): Promise<UploadResult> {
  const bytes = typeof input.bytes === "string" ? Buffer.from(input.bytes, "utf8") : input.bytes;
  const workPath = await newWorkPath("upload");
  await writeFile(workPath, bytes);
  const { bytes: _ignored, ...rest } = input;
  return uploadDataset(
    actor,
    { ...rest, workPath, byteSize: bytes.length, sha256: createHash("sha256").update(bytes).digest("hex") },
    progress,
  );
}
