/**
 * The data manager's service: upload (check, screen, compare, store), screen decisions,
 * column removal, lock, and the reads behind the datasets pages. Every change of state is
 * one write transaction with its audit event.
 */
import { createHash } from "node:crypto";
import { readFile, writeFile } from "node:fs/promises";
import { and, asc, desc, eq, inArray, isNull, ne } from "drizzle-orm";
import { stringify } from "csv-stringify/sync";
import { appendAudit, type Actor } from "../audit.server";
import { db, isoNow, newId, t, writeTransaction } from "../db/index.server";
import { withCategoricalHints } from "./categorical-hint";
import type { ColumnMeta } from "./column-summary";
import type { ScreenHitView } from "../../shared/datasets";
import { primeArrowColumnsCache, textOf, writeArrowColumns, type StoredColumns } from "./arrow-columns.server";
import { summariseChanges, type ChangeSummary } from "./diff";
import { firstBytesOf, formatOf, parseDatasetFile, type DatasetFormat, type ParseOptions } from "./parse.server";
import { requireFreshSignIn, signatureEvidence, type Signer } from "../signatures.server";
import { maskValue, screenColumns } from "./screen";
import { isStorageError } from "../storage-errors.server";
import { auditUploadRefusal, storageRefusal } from "./upload.server";
import { storedColumnsFromParsed, storedColumnsOf } from "./stored-columns.server";
import {
  absoluteStorePath,
  blobRelativePath,
  columnsRelativePath,
  moveIntoStore,
  newWorkPath,
  deleteVersionFiles,
  removeQuietly,
  sha256OfFile,
  sweepDatasetLeftovers,
} from "./store.server";

export type { ChangeSummary } from "./diff";
export { sha256OfFile } from "./store.server";
export type DatasetVersionRow = typeof t.datasetVersions.$inferSelect;
export type ScreenHitRow = typeof t.identifierScreenHits.$inferSelect;

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
  | { ok: true; versionId: string; version: number; datasetId: string; hits: number; changes: ChangeSummary | null }
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

async function latestLocked(datasetId: string): Promise<DatasetVersionRow | null> {
  const [v] = await db
    .select()
    .from(t.datasetVersions)
    .where(and(eq(t.datasetVersions.datasetId, datasetId), eq(t.datasetVersions.status, "locked")))
    .orderBy(desc(t.datasetVersions.version))
    .limit(1);
  return v ?? null;
}

function parsedOf(v: DatasetVersionRow): Promise<StoredColumns> {
  if (v.purgedAt) throw new Error(`Version ${v.version} was purged on ${v.purgedAt}; its files are no longer stored.`);
  return storedColumnsOf(v);
}

/**
 * Checks an uploaded file and, when it passes, stores it as the next draft version of the
 * named dataset. On any problem nothing is stored: the work file is removed and the problems
 * are returned (and recorded in the audit trail as a refused upload).
 */
export async function uploadDataset(actor: Actor, req: UploadRequest, progress: Progress = () => undefined): Promise<UploadResult> {
  let columnsWork: string | null = null;
  const placed: string[] = [];
  try {
    await sweepLeftovers().catch(() => undefined);
    const format: DatasetFormat = formatOf(req.fileName, await firstBytesOf(req.workPath));
    const options: ParseOptions = {
      keyColumns: req.keyColumns,
      numericColumns: req.numericColumns,
      readByValues: req.readByValues?.columns,
      onProgress: (f) => progress("parse", f),
    };
    const outcome = await parseDatasetFile(req.workPath, req.fileName, format, options);
    if (!outcome.ok) return await refuse(actor, req, outcome.problems);
    const parsed = outcome.dataset;

    const [existing] = await db
      .select()
      .from(t.datasets)
      .where(and(eq(t.datasets.studyId, req.studyId), eq(t.datasets.name, req.datasetName)))
      .limit(1);
    if (existing) {
      const [same] = await db
        .select({ version: t.datasetVersions.version, status: t.datasetVersions.status })
        .from(t.datasetVersions)
        .where(and(eq(t.datasetVersions.datasetId, existing.id), eq(t.datasetVersions.sha256, req.sha256), isNull(t.datasetVersions.purgedAt)))
        .orderBy(desc(t.datasetVersions.version))
        .limit(1);
      if (same) {
        return await refuse(actor, req, [
          `${req.fileName} is byte for byte the same as version ${same.version} of ${req.datasetName} (${same.status}). Nothing changed, so no new version was made.`,
        ]);
      }
    }
    progress("screen", 0);
    const hits = screenColumns(
      parsed.names.map((name, j) => {
        // `format` is set by readers of files that declare one (SAS formats of transport files).
        const meta = parsed.columns[j] as ColumnMeta & { format?: string | null };
        return { name, type: meta.type, cells: parsed.cells[j], label: meta.label, format: meta.format ?? null };
      }),
    );
    const stored = storedColumnsFromParsed(parsed);
    const carried = existing ? await resolutionsToCarry(existing.id) : new Map<string, CarriedResolution>();
    const previous = existing ? await latestLocked(existing.id) : null;
    let changes: ChangeSummary | null = null;
    if (previous) {
      // Both sides as the stored typed columns give them, so "1.50" and "1.5" are the same value.
      const before = await parsedOf(previous);
      changes = summariseChanges(
        { version: previous.version, names: before.names, cells: before.columns.map(textOf), keyColumns: JSON.parse(previous.keyColumnsJson) as string[] },
        { names: parsed.names, cells: stored.columns.map(textOf), keyColumns: parsed.keyColumns },
      );
    }
    progress("store", 0);
    columnsWork = await newWorkPath("arrow");
    await writeArrowColumns(columnsWork, stored);
    const storedPath = blobRelativePath(req.sha256);
    const parsedPath = columnsRelativePath(req.sha256);
    if (await moveIntoStore(req.workPath, storedPath)) placed.push(storedPath);
    if (await moveIntoStore(columnsWork, parsedPath)) placed.push(parsedPath);
    const saved = await writeTransaction(async (tx) => {
      let datasetId = existing?.id;
      if (!datasetId) {
        datasetId = newId();
        await tx.insert(t.datasets).values({ id: datasetId, studyId: req.studyId, name: req.datasetName, createdBy: actor.id });
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
          maskedExamplesJson: JSON.stringify({ label: h.ruleLabel, basis: h.basis, matches: h.matches, examples: h.maskedExamples }),
          ...(earlier
            ? { resolution: "not_identifier" as const, rationale: earlier.rationale, resolvedBy: earlier.resolvedBy, resolvedAt: earlier.resolvedAt, carriedFromId: earlier.originId }
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
            ...(req.readByValues && req.readByValues.columns.length > 0 ? { readByValues: req.readByValues } : {}),
            warnings: parsed.columns.flatMap((c) => c.warnings ?? []).slice(0, 20),
            screenHits: hits.map((h) => `${h.column}: ${h.rule}`),
            screenResolutionsCarriedForward: carriedForward,
            changes: changes ? { rowsAdded: changes.rowsAdded, rowsRemoved: changes.rowsRemoved, rowsChanged: changes.rowsChanged, columnsAdded: changes.columnsAdded, columnsRemoved: changes.columnsRemoved } : null,
          },
        },
        tx,
      );
      return { versionId, version, datasetId };
    });
    // The preview opens next: serve it from the columns already in memory.
    primeArrowColumnsCache(absoluteStorePath(parsedPath), stored);
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
    .where(and(eq(t.datasetVersions.datasetId, datasetId), eq(t.identifierScreenHits.resolution, "not_identifier")))
    .orderBy(desc(t.datasetVersions.version));
  const out = new Map<string, CarriedResolution>();
  for (const { h, version } of rows) {
    const k = carryKey(h.column, h.rule);
    if (out.has(k)) continue;
    out.set(k, { originId: h.carriedFromId ?? h.id, version, rationale: h.rationale, resolvedBy: h.resolvedBy, resolvedAt: h.resolvedAt });
  }
  return out;
}

async function refuse(actor: Actor, req: UploadRequest, problems: string[]): Promise<UploadResult> {
  await auditUploadRefusal(actor, req.studyId, { dataset: req.datasetName, fileName: req.fileName, sha256: req.sha256, byteSize: req.byteSize }, problems);
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
  for (const relative of placed) if (!referenced.has(relative)) await removeQuietly(absoluteStorePath(relative));
}

// ---------------------------------------------------------------------------------------------
// Reads

export interface VersionSummary {
  id: string;
  version: number;
  status: "draft" | "locked" | "superseded";
  format: DatasetFormat;
  fileName: string;
  byteSize: number;
  sha256: string;
  rowCount: number;
  columnCount: number;
  /** Dataset label the file declares (Dataset-JSON, XPORT); null for CSV. */
  datasetLabel?: string | null;
  uploadedBy: string | null;
  uploadedAt: string;
  lockedBy: string | null;
  lockedAt: string | null;
  /** Set when the version's files were purged (superseded and never locked). */
  purgedBy: string | null;
  purgedAt: string | null;
  unresolvedHits: number;
  derivedFromVersion: number | null;
  removedColumns: string[];
  changes: ChangeSummary | null;
}

export interface DatasetListing {
  id: string;
  name: string;
  versions: VersionSummary[];
}

async function peopleNames(ids: (string | null)[]): Promise<Map<string, string>> {
  const wanted = [...new Set(ids.filter((x): x is string => Boolean(x)))];
  if (wanted.length === 0) return new Map();
  const rows = await db.select({ id: t.people.id, name: t.people.displayName }).from(t.people).where(inArray(t.people.id, wanted));
  return new Map(rows.map((r) => [r.id, r.name]));
}

function summaryOf(v: DatasetVersionRow, names: Map<string, string>, unresolved: number, byId: Map<string, number>): VersionSummary {
  return {
    id: v.id,
    version: v.version,
    status: v.status,
    format: v.format,
    fileName: v.fileName,
    datasetLabel: v.datasetLabel ?? null,
    byteSize: v.byteSize,
    sha256: v.sha256,
    rowCount: v.rowCount,
    columnCount: (JSON.parse(v.columnsJson) as unknown[]).length,
    uploadedBy: v.uploadedBy ? (names.get(v.uploadedBy) ?? null) : null,
    uploadedAt: v.uploadedAt,
    lockedBy: v.lockedBy ? (names.get(v.lockedBy) ?? null) : null,
    lockedAt: v.lockedAt,
    purgedBy: v.purgedBy ? (names.get(v.purgedBy) ?? null) : null,
    purgedAt: v.purgedAt,
    unresolvedHits: unresolved,
    derivedFromVersion: v.derivedFromId ? (byId.get(v.derivedFromId) ?? null) : null,
    removedColumns: v.removedColumnsJson ? (JSON.parse(v.removedColumnsJson) as string[]) : [],
    changes: v.changeSummaryJson ? (JSON.parse(v.changeSummaryJson) as ChangeSummary) : null,
  };
}

async function unresolvedCounts(versionIds: string[]): Promise<Map<string, number>> {
  if (versionIds.length === 0) return new Map();
  const rows = await db
    .select({ v: t.identifierScreenHits.datasetVersionId })
    .from(t.identifierScreenHits)
    .where(and(inArray(t.identifierScreenHits.datasetVersionId, versionIds), isNull(t.identifierScreenHits.resolution)));
  const counts = new Map<string, number>();
  for (const r of rows) counts.set(r.v, (counts.get(r.v) ?? 0) + 1);
  return counts;
}

/** The study's datasets, each with its versions, newest first. */
export async function listDatasets(studyId: string): Promise<DatasetListing[]> {
  const rows = await db
    .select({ d: t.datasets, v: t.datasetVersions })
    .from(t.datasets)
    .leftJoin(t.datasetVersions, eq(t.datasetVersions.datasetId, t.datasets.id))
    .where(eq(t.datasets.studyId, studyId))
    .orderBy(asc(t.datasets.name), desc(t.datasetVersions.version));
  const versions = rows.flatMap((r) => (r.v ? [r.v] : []));
  const names = await peopleNames(versions.flatMap((v) => [v.uploadedBy, v.lockedBy, v.purgedBy]));
  const unresolved = await unresolvedCounts(versions.map((v) => v.id));
  const byId = new Map(versions.map((v) => [v.id, v.version]));
  const out = new Map<string, DatasetListing>();
  for (const { d, v } of rows) {
    const entry = out.get(d.id) ?? { id: d.id, name: d.name, versions: [] };
    out.set(d.id, entry);
    if (v) entry.versions.push(summaryOf(v, names, unresolved.get(v.id) ?? 0, byId));
  }
  return [...out.values()];
}

export interface VersionDetail {
  datasetId: string;
  datasetName: string;
  version: VersionSummary;
  /** With `looksCategorical` where a numeric column looks like codes (categorical-hint.ts). */
  columns: (ColumnMeta & { looksCategorical?: string })[];
  keyColumns: string[];
  hits: ScreenHitView[];
  /** Columns the preview shows masked until their screen hits are resolved as not identifiers. */
  maskedColumns: string[];
  latestVersion: number;
}

async function versionInStudy(studyId: string, versionId: string): Promise<{ d: typeof t.datasets.$inferSelect; v: DatasetVersionRow } | null> {
  const [row] = await db
    .select({ d: t.datasets, v: t.datasetVersions })
    .from(t.datasetVersions)
    .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
    .where(and(eq(t.datasetVersions.id, versionId), eq(t.datasets.studyId, studyId)))
    .limit(1);
  return row ?? null;
}

function hitView(h: ScreenHitRow, names: Map<string, string>, originVersions: Map<string, number>): ScreenHitView {
  const meta = JSON.parse(h.maskedExamplesJson) as { label: string; basis: "name" | "values"; matches: number; examples: string[] };
  return {
    id: h.id,
    column: h.column,
    rule: h.rule,
    ruleLabel: meta.label,
    basis: meta.basis,
    matches: meta.matches,
    maskedExamples: meta.examples,
    resolution: h.resolution,
    rationale: h.rationale,
    resolvedBy: h.resolvedBy ? (names.get(h.resolvedBy) ?? null) : null,
    resolvedAt: h.resolvedAt,
    carriedFromVersion: h.carriedFromId ? (originVersions.get(h.carriedFromId) ?? null) : null,
  };
}

/** Version numbers of the hits that carried-forward resolutions came from. */
async function originVersionsOf(hits: ScreenHitRow[]): Promise<Map<string, number>> {
  const ids = [...new Set(hits.flatMap((h) => (h.carriedFromId ? [h.carriedFromId] : [])))];
  if (ids.length === 0) return new Map();
  const rows = await db
    .select({ id: t.identifierScreenHits.id, version: t.datasetVersions.version })
    .from(t.identifierScreenHits)
    .innerJoin(t.datasetVersions, eq(t.datasetVersions.id, t.identifierScreenHits.datasetVersionId))
    .where(inArray(t.identifierScreenHits.id, ids));
  return new Map(rows.map((r) => [r.id, r.version]));
}

/** One version with its column summaries and screen hits, or null when it is not in this study. */
export async function getVersionDetail(studyId: string, versionId: string): Promise<VersionDetail | null> {
  const row = await versionInStudy(studyId, versionId);
  if (!row) return null;
  const { d, v } = row;
  const hits = await db.select().from(t.identifierScreenHits).where(eq(t.identifierScreenHits.datasetVersionId, v.id)).orderBy(asc(t.identifierScreenHits.column));
  const all = await db.select({ id: t.datasetVersions.id, version: t.datasetVersions.version }).from(t.datasetVersions).where(eq(t.datasetVersions.datasetId, d.id));
  const names = await peopleNames([v.uploadedBy, v.lockedBy, v.purgedBy, ...hits.map((h) => h.resolvedBy)]);
  const unresolved = hits.filter((h) => h.resolution === null).length;
  const origins = await originVersionsOf(hits);
  return {
    datasetId: d.id,
    datasetName: d.name,
    version: summaryOf(v, names, unresolved, new Map(all.map((a) => [a.id, a.version]))),
    columns: withCategoricalHints(JSON.parse(v.columnsJson) as ColumnMeta[]),
    keyColumns: JSON.parse(v.keyColumnsJson) as string[],
    hits: hits.map((h) => hitView(h, names, origins)),
    maskedColumns: maskedColumnsOf(hits),
    latestVersion: Math.max(...all.map((a) => a.version)),
  };
}

export interface RowsWindow {
  total: number;
  offset: number;
  columns: string[];
  /** Columns whose cells are masked (maskValue) because the identifier screen flagged them. */
  masked: string[];
  rowNumbers: number[];
  rows: string[][];
}

/**
 * Columns shown masked in the preview: flagged by the identifier screen and not resolved as
 * "not an identifier" (an open hit, or a column the data manager removed in a later version).
 */
function maskedColumnsOf(hits: Pick<ScreenHitRow, "column" | "resolution">[]): string[] {
  const cleared = new Map<string, boolean>();
  for (const h of hits) cleared.set(h.column, (cleared.get(h.column) ?? true) && h.resolution === "not_identifier");
  return [...cleared].filter(([, ok]) => !ok).map(([c]) => c);
}

const sortCache = new Map<string, Uint32Array>();

function sortOrder(versionId: string, parsed: StoredColumns, column: string, descending: boolean): Uint32Array {
  const key = `${versionId}\u0000${column}\u0000${descending}`;
  const hit = sortCache.get(key);
  if (hit) return hit;
  const cells = parsed.columns[parsed.names.indexOf(column)];
  const n = cells.length;
  const order = new Uint32Array(n);
  for (let i = 0; i < n; i++) order[i] = i;
  const sign = descending ? -1 : 1;
  if (cells instanceof Float64Array) {
    const values = cells;
    order.sort((a, b) => {
      const x = values[a];
      const y = values[b];
      if (Number.isNaN(x) || Number.isNaN(y)) return Number.isNaN(x) ? (Number.isNaN(y) ? a - b : 1) : -1;
      return x === y ? a - b : sign * (x - y);
    });
  } else {
    order.sort((a, b) => {
      const x = cells[a];
      const y = cells[b];
      if (x === null || y === null) return x === null ? (y === null ? a - b : 1) : -1;
      return x === y ? a - b : x < y ? -sign : sign;
    });
  }
  sortCache.set(key, order);
  while (sortCache.size > 8) sortCache.delete(sortCache.keys().next().value as string);
  return order;
}

/** A window of a version's rows for the preview table, optionally sorted by one column (missing last). */
export async function readRowsWindow(
  studyId: string,
  versionId: string,
  window: { offset: number; limit: number; sort?: { column: string; descending: boolean } | null },
): Promise<RowsWindow | null> {
  const row = await versionInStudy(studyId, versionId);
  if (!row || row.v.purgedAt) return null;
  const parsed = await parsedOf(row.v);
  const hits = await db
    .select({ column: t.identifierScreenHits.column, resolution: t.identifierScreenHits.resolution })
    .from(t.identifierScreenHits)
    .where(eq(t.identifierScreenHits.datasetVersionId, row.v.id));
  const masked = maskedColumnsOf(hits);
  const maskAt = parsed.names.map((n) => masked.includes(n));
  const total = parsed.rowNumbers.length;
  const offset = Math.max(0, Math.min(window.offset, total));
  const end = Math.min(total, offset + Math.max(0, Math.min(window.limit, 1000)));
  // Sorting by a masked column would show the order of its values: it is not offered.
  const sortable = window.sort && parsed.names.includes(window.sort.column) && !masked.includes(window.sort.column);
  const order = sortable && window.sort ? sortOrder(row.v.id, parsed, window.sort.column, window.sort.descending) : null;
  const rows: string[][] = [];
  const rowNumbers: number[] = [];
  const cell = (c: StoredColumns["columns"][number], i: number): string => (c instanceof Float64Array ? (Number.isNaN(c[i]) ? "" : String(c[i])) : (c[i] ?? ""));
  for (let k = offset; k < end; k++) {
    const i = order ? order[k] : k;
    rows.push(parsed.columns.map((c, j) => (maskAt[j] ? maskValue(cell(c, i)) : cell(c, i))));
    rowNumbers.push(parsed.rowNumbers[i]);
  }
  return { total, offset, columns: parsed.names, masked, rowNumbers, rows };
}

// ---------------------------------------------------------------------------------------------
// Screen decisions, removal, lock

export type ActionResult<T = object> = ({ ok: true } & T) | { ok: false; message: string };

async function hitInStudy(studyId: string, hitId: string) {
  const [row] = await db
    .select({ h: t.identifierScreenHits, v: t.datasetVersions, d: t.datasets })
    .from(t.identifierScreenHits)
    .innerJoin(t.datasetVersions, eq(t.datasetVersions.id, t.identifierScreenHits.datasetVersionId))
    .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
    .where(and(eq(t.identifierScreenHits.id, hitId), eq(t.datasets.studyId, studyId)))
    .limit(1);
  return row ?? null;
}

/** Records why a flagged column is not a direct identifier. */
export async function recordNotIdentifier(actor: Actor, studyId: string, hitId: string, rationale: string): Promise<ActionResult> {
  const text = rationale.trim();
  if (text.length < 10) return { ok: false, message: "Say in a sentence why this column is not an identifier (at least 10 characters), for example: pseudonymous subject code assigned by the study." };
  const row = await hitInStudy(studyId, hitId);
  if (!row) return { ok: false, message: "That screen result is not in this study." };
  if (row.v.status !== "draft") return { ok: false, message: `Version ${row.v.version} is ${row.v.status}; screen decisions are made on the current draft only.` };
  if (row.h.resolution) return { ok: false, message: `This hit was already resolved (${row.h.resolution === "removed" ? "column removed" : "not an identifier"}).` };
  await writeTransaction(async (tx) => {
    await tx
      .update(t.identifierScreenHits)
      .set({ resolution: "not_identifier", rationale: text, resolvedBy: actor.id, resolvedAt: isoNow() })
      .where(eq(t.identifierScreenHits.id, hitId));
    await appendAudit(
      {
        actor,
        action: "dataset.screen_decision",
        entityType: "dataset_version",
        entityId: row.v.id,
        studyId,
        before: { column: row.h.column, rule: row.h.rule, resolution: null },
        after: { column: row.h.column, rule: row.h.rule, resolution: "not_identifier", rationale: text },
      },
      tx,
    );
  });
  return { ok: true };
}

/**
 * The version's file without one column: Dataset-JSON stays Dataset-JSON (in its JSON or
 * NDJSON form); CSV and XPORT become CSV (Plumbline writes no transport files).
 */
async function bytesWithout(v: DatasetVersionRow, parsed: StoredColumns, column: string): Promise<{ bytes: Buffer; format: DatasetFormat; fileName: string }> {
  const keep = parsed.names.map((n, j) => (n === column ? -1 : j)).filter((j) => j >= 0);
  if (v.format === "dataset-json") {
    const text = await readFile(absoluteStorePath(v.storedPath), "utf8");
    const drop = (columns: { name: string }[]) => columns.findIndex((c) => c.name.trim() === column);
    if (/\.ndjson$/i.test(v.fileName)) {
      const [first, ...rest] = text.split(/\r?\n/).filter((l) => l.trim() !== "");
      const meta = JSON.parse(first) as { columns: { name: string }[] };
      const at = drop(meta.columns);
      meta.columns = meta.columns.filter((_, i) => i !== at);
      const rows = rest.map((l) => JSON.stringify((JSON.parse(l) as unknown[]).filter((_, i) => i !== at)));
      return { bytes: Buffer.from([JSON.stringify(meta), ...rows].join("\n") + "\n", "utf8"), format: "dataset-json", fileName: v.fileName };
    }
    const doc = JSON.parse(text) as { columns: { name: string }[]; rows: unknown[][] };
    const at = drop(doc.columns);
    doc.columns = doc.columns.filter((_, i) => i !== at);
    doc.rows = doc.rows.map((r) => r.filter((_, i) => i !== at));
    return { bytes: Buffer.from(JSON.stringify(doc), "utf8"), format: "dataset-json", fileName: v.fileName };
  }
  const n = parsed.rowNumbers.length;
  const cells = parsed.columns.map(textOf);
  const records: string[][] = [keep.map((j) => parsed.names[j])];
  for (let i = 0; i < n; i++) records.push(keep.map((j) => cells[j][i]));
  return { bytes: Buffer.from(stringify(records, { record_delimiter: "\n" }), "utf8"), format: "csv", fileName: v.fileName.replace(/\.[^.]*$/, "") + ".csv" };
}

/**
 * Removes a flagged column: writes a new draft version derived from this one without the
 * column, records what was removed, and carries the other screen results over.
 */
export async function removeFlaggedColumn(actor: Actor, studyId: string, hitId: string): Promise<ActionResult<{ versionId: string; version: number }>> {
  const row = await hitInStudy(studyId, hitId);
  if (!row) return { ok: false, message: "That screen result is not in this study." };
  const { v, h } = row;
  if (v.status !== "draft") return { ok: false, message: `Version ${v.version} is ${v.status}; columns are removed from the current draft only.` };
  const parsed = await parsedOf(v);
  const meta = JSON.parse(v.columnsJson) as ColumnMeta[];
  if (parsed.names.length === 1) return { ok: false, message: `"${h.column}" is the only column; a dataset without columns cannot be stored.` };
  const key = JSON.parse(v.keyColumnsJson) as string[];
  if (key.includes(h.column)) {
    return { ok: false, message: `"${h.column}" is part of the dataset's key (${key.join(", ")}). Records could no longer be told apart; record why it is not an identifier instead, or replace it with a pseudonymous code and upload again.` };
  }
  const { bytes, format: derivedFormat, fileName: derivedFileName } = await bytesWithout(v, parsed, h.column);
  const sha256 = createHash("sha256").update(bytes).digest("hex");
  const j = parsed.names.indexOf(h.column);
  const derived: StoredColumns = {
    names: parsed.names.filter((_, i) => i !== j),
    columns: parsed.columns.filter((_, i) => i !== j),
    rowNumbers: parsed.rowNumbers,
    columnMeta: parsed.columnMeta.filter((_, i) => i !== j),
    dataset: parsed.dataset,
  };
  const blobWork = await newWorkPath("blob");
  const colsWork = await newWorkPath("arrow");
  try {
    await writeFile(blobWork, bytes);
    await writeArrowColumns(colsWork, derived);
    await moveIntoStore(blobWork, blobRelativePath(sha256));
    await moveIntoStore(colsWork, columnsRelativePath(sha256));
    const removed = [...(v.removedColumnsJson ? (JSON.parse(v.removedColumnsJson) as string[]) : []), h.column];
    // Net changes against the latest locked version, compared afresh: a column the upload added
    // and the screen then removed is neither added nor removed.
    const locked = await latestLocked(v.datasetId);
    let changes: ChangeSummary | null = null;
    if (locked) {
      const before = await parsedOf(locked);
      changes = summariseChanges(
        { version: locked.version, names: before.names, cells: before.columns.map(textOf), keyColumns: JSON.parse(locked.keyColumnsJson) as string[] },
        { names: derived.names, cells: derived.columns.map(textOf), keyColumns: key },
      );
    }
    return await writeTransaction(async (tx) => {
      const [last] = await tx
        .select({ version: t.datasetVersions.version })
        .from(t.datasetVersions)
        .where(eq(t.datasetVersions.datasetId, v.datasetId))
        .orderBy(desc(t.datasetVersions.version))
        .limit(1);
      const version = (last?.version ?? 0) + 1;
      const versionId = newId();
      await tx.update(t.datasetVersions).set({ status: "superseded" }).where(eq(t.datasetVersions.id, v.id));
      await tx.insert(t.datasetVersions).values({
        id: versionId,
        datasetId: v.datasetId,
        version,
        status: "draft",
        format: derivedFormat,
        fileName: derivedFileName,
        byteSize: bytes.length,
        sha256,
        rowCount: v.rowCount,
        datasetLabel: v.datasetLabel,
        columnsJson: JSON.stringify(meta.filter((c) => c.name !== h.column)),
        keyColumnsJson: v.keyColumnsJson,
        storedPath: blobRelativePath(sha256),
        parsedPath: columnsRelativePath(sha256),
        derivedFromId: v.id,
        removedColumnsJson: JSON.stringify(removed),
        changeSummaryJson: changes ? JSON.stringify(changes) : null,
        uploadedBy: actor.id,
        uploadedAt: isoNow(),
      });
      await tx.update(t.identifierScreenHits).set({ resolution: "removed", resolvedBy: actor.id, resolvedAt: isoNow() }).where(eq(t.identifierScreenHits.id, h.id));
      const others = await tx.select().from(t.identifierScreenHits).where(eq(t.identifierScreenHits.datasetVersionId, v.id));
      for (const o of others) {
        if (o.column === h.column) continue;
        await tx.insert(t.identifierScreenHits).values({ ...o, id: newId(), datasetVersionId: versionId });
      }
      await appendAudit(
        {
          actor,
          action: "dataset.column_remove",
          entityType: "dataset_version",
          entityId: versionId,
          studyId,
          before: { version: v.version, sha256: v.sha256, columns: parsed.names.length },
          after: { version, sha256, derivedFrom: v.version, removedColumn: h.column, rule: h.rule, columns: derived.names.length },
        },
        tx,
      );
      return { ok: true as const, versionId, version };
    });
  } finally {
    await removeQuietly(blobWork);
    await removeQuietly(colsWork);
  }
}

/**
 * Locks a draft version: refused while a screen hit is unresolved or when the stored bytes no
 * longer match their hash. Locking is an electronic signature (`signatures.server.ts`): it
 * needs a fresh sign-in (else `SignatureRefused`) and records its meaning, name and time.
 */
export async function lockVersion(actor: Signer, studyId: string, versionId: string): Promise<ActionResult<{ sha256: string }>> {
  const row = await versionInStudy(studyId, versionId);
  if (!row) return { ok: false, message: "That dataset version is not in this study." };
  const { v, d } = row;
  if (v.status !== "draft") return { ok: false, message: `Version ${v.version} of ${d.name} is ${v.status}; only the current draft can be locked.` };
  const open = await db
    .select({ column: t.identifierScreenHits.column })
    .from(t.identifierScreenHits)
    .where(and(eq(t.identifierScreenHits.datasetVersionId, v.id), isNull(t.identifierScreenHits.resolution)));
  if (open.length > 0) {
    const columns = [...new Set(open.map((o) => o.column))];
    return { ok: false, message: `Resolve the identifier screen first: ${columns.map((c) => `"${c}"`).join(", ")} ${columns.length === 1 ? "is" : "are"} still flagged. Remove the column or record why it is not an identifier.` };
  }
  requireFreshSignIn(actor);
  const actual = await sha256OfFile(absoluteStorePath(v.storedPath));
  if (actual !== v.sha256) return { ok: false, message: `The stored file of version ${v.version} no longer matches its SHA-256 (${v.sha256}); the store was changed outside Plumbline. Upload the file again.` };
  const lockedAt = isoNow();
  return writeTransaction(async (tx) => {
    const [current] = await tx.select({ status: t.datasetVersions.status }).from(t.datasetVersions).where(eq(t.datasetVersions.id, v.id));
    if (current?.status !== "draft") return { ok: false as const, message: `Version ${v.version} was ${current?.status} meanwhile.` };
    await tx.update(t.datasetVersions).set({ status: "locked", lockedBy: actor.id, lockedAt }).where(eq(t.datasetVersions.id, v.id));
    await appendAudit(
      {
        actor,
        action: "dataset.lock",
        entityType: "dataset_version",
        entityId: v.id,
        studyId,
        before: { status: "draft" },
        after: { status: "locked", dataset: d.name, version: v.version, sha256: v.sha256, rows: v.rowCount, lockedAt, signature: signatureEvidence("dataset", actor, lockedAt) },
      },
      tx,
    );
    return { ok: true as const, sha256: v.sha256 };
  });
}

/** Whether a version may be purged: superseded, never locked, not purged yet; else why not. */
export function purgeRefusal(v: Pick<DatasetVersionRow, "version" | "status" | "lockedAt" | "purgedAt">): string | null {
  if (v.purgedAt) return `Version ${v.version} was already purged.`;
  if (v.status !== "superseded") return `Version ${v.version} is ${v.status}; only a superseded version can be purged.`;
  if (v.lockedAt) return `Version ${v.version} was locked once; a locked version's bytes are kept for good.`;
  return null;
}

/**
 * Purges a superseded version that was never locked: removes its stored bytes and parsed
 * columns (only when no other unpurged version holds the same bytes) and keeps its row,
 * screen results and audit history, marked purged. Asks for an explicit confirmation.
 */
export async function purgeVersion(actor: Actor, studyId: string, versionId: string, confirmed: boolean): Promise<ActionResult<{ removedFiles: string[] }>> {
  const row = await versionInStudy(studyId, versionId);
  if (!row) return { ok: false, message: "That dataset version is not in this study." };
  const { v, d } = row;
  const refusal = purgeRefusal(v);
  if (refusal) return { ok: false, message: refusal };
  if (!confirmed) return { ok: false, message: `Confirm that version ${v.version} of ${d.name} and its stored file are to be removed for good (tick the box), then purge.` };
  const purgedAt = isoNow();
  const outcome = await writeTransaction(async (tx) => {
    const [current] = await tx.select().from(t.datasetVersions).where(eq(t.datasetVersions.id, v.id));
    const again = current ? purgeRefusal(current) : "The version is gone.";
    if (again) return { ok: false as const, message: again };
    const paths = [v.storedPath, ...(v.parsedPath ? [v.parsedPath] : [])];
    // Content-addressed: another version (of any dataset) with the same bytes shares the files.
    const sharing = await tx
      .select({ id: t.datasetVersions.id })
      .from(t.datasetVersions)
      .where(and(ne(t.datasetVersions.id, v.id), isNull(t.datasetVersions.purgedAt), eq(t.datasetVersions.sha256, v.sha256)))
      .limit(1);
    const removable = sharing.length > 0 ? [] : paths;
    await tx.update(t.datasetVersions).set({ purgedAt, purgedBy: actor.id }).where(eq(t.datasetVersions.id, v.id));
    await appendAudit(
      {
        actor,
        action: "dataset.purge",
        entityType: "dataset_version",
        entityId: v.id,
        studyId,
        before: { status: v.status, storedPath: v.storedPath, parsedPath: v.parsedPath },
        after: { dataset: d.name, version: v.version, sha256: v.sha256, byteSize: v.byteSize, removedFiles: removable, keptFiles: paths.filter((p) => !removable.includes(p)), purgedAt },
      },
      tx,
    );
    return { ok: true as const, removedFiles: removable };
  });
  // Files go only after the record says so; a crash in between leaves unreferenced files that
  // the next sweep removes.
  if (outcome.ok && outcome.removedFiles.length > 0) await deleteVersionFiles(v);
  return outcome;
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
  return uploadDataset(actor, { ...rest, workPath, byteSize: bytes.length, sha256: createHash("sha256").update(bytes).digest("hex") }, progress);
}
