/**
 * The reads behind the datasets pages: the study's datasets with their versions, a version's
 * detail with its screen hits, and windows of rows (masked where a flagged column is withheld).
 */
import { and, asc, desc, eq, inArray, isNull } from "drizzle-orm";
import { db, t } from "../db/index.server";
import { withCategoricalHints } from "./categorical-hint";
import type { ColumnMeta } from "./column-summary";
import type { ScreenHitView } from "../../shared/datasets";
import type { StoredColumns } from "./arrow-columns.server";
import type { ChangeSummary } from "./diff";
import type { DatasetFormat } from "./parse.server";
import { maskValue } from "./screen";
import {
  parsedOf,
  versionInStudy,
  type DatasetVersionRow,
  type ScreenHitRow,
} from "./dataset-versions.server";

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
  const rows = await db
    .select({ id: t.people.id, name: t.people.displayName })
    .from(t.people)
    .where(inArray(t.people.id, wanted));
  return new Map(rows.map((r) => [r.id, r.name]));
}

function summaryOf(
  v: DatasetVersionRow,
  names: Map<string, string>,
  unresolved: number,
  byId: Map<string, number>,
): VersionSummary {
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
    .where(
      and(
        inArray(t.identifierScreenHits.datasetVersionId, versionIds),
        isNull(t.identifierScreenHits.resolution),
      ),
    );
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

function hitView(
  h: ScreenHitRow,
  names: Map<string, string>,
  originVersions: Map<string, number>,
): ScreenHitView {
  const meta = JSON.parse(h.maskedExamplesJson) as {
    label: string;
    basis: "name" | "values";
    matches: number;
    examples: string[];
  };
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
  const hits = await db
    .select()
    .from(t.identifierScreenHits)
    .where(eq(t.identifierScreenHits.datasetVersionId, v.id))
    .orderBy(asc(t.identifierScreenHits.column));
  const all = await db
    .select({ id: t.datasetVersions.id, version: t.datasetVersions.version })
    .from(t.datasetVersions)
    .where(eq(t.datasetVersions.datasetId, d.id));
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
  for (const h of hits)
    cleared.set(h.column, (cleared.get(h.column) ?? true) && h.resolution === "not_identifier");
  return [...cleared].filter(([, ok]) => !ok).map(([c]) => c);
}

const sortCache = new Map<string, Uint32Array>();

function sortOrder(
  versionId: string,
  parsed: StoredColumns,
  column: string,
  descending: boolean,
): Uint32Array {
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
  const sortable =
    window.sort && parsed.names.includes(window.sort.column) && !masked.includes(window.sort.column);
  const order =
    sortable && window.sort ? sortOrder(row.v.id, parsed, window.sort.column, window.sort.descending) : null;
  const rows: string[][] = [];
  const rowNumbers: number[] = [];
  const cell = (c: StoredColumns["columns"][number], i: number): string =>
    c instanceof Float64Array ? (Number.isNaN(c[i]) ? "" : String(c[i])) : (c[i] ?? "");
  for (let k = offset; k < end; k++) {
    const i = order ? order[k] : k;
    rows.push(parsed.columns.map((c, j) => (maskAt[j] ? maskValue(cell(c, i)) : cell(c, i))));
    rowNumbers.push(parsed.rowNumbers[i]);
  }
  return { total, offset, columns: parsed.names, masked, rowNumbers, rows };
}
