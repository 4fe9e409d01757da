/**
 * The data manager's decisions on a version: screen hits kept as not identifying or their
 * column removed (a new version), lock with a signature, and purge. Each change of state is one
 * write transaction with its audit event.
 */
import { createHash } from "node:crypto";
import { readFile, writeFile } from "node:fs/promises";
import { and, desc, eq, isNull, ne } from "drizzle-orm";
import { stringify } from "csv-stringify/sync";
import { appendAudit, type Actor } from "../audit.server";
import { db, isoNow, newId, t, writeTransaction } from "../db/index.server";
import type { ColumnMeta } from "./column-summary";
import { textOf, writeArrowColumns, type StoredColumns } from "./arrow-columns.server";
import { summariseChanges, type ChangeSummary } from "./diff";
import type { DatasetFormat } from "./parse.server";
import { requireFreshSignIn, signatureEvidence, type Signer } from "../signatures.server";
import { latestLocked, parsedOf, versionInStudy, type DatasetVersionRow } from "./dataset-versions.server";
import {
  absoluteStorePath,
  blobRelativePath,
  columnsRelativePath,
  moveIntoStore,
  newWorkPath,
  deleteVersionFiles,
  removeQuietly,
  sha256OfFile,
} from "./store.server";

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
export async function recordNotIdentifier(
  actor: Actor,
  studyId: string,
  hitId: string,
  rationale: string,
): Promise<ActionResult> {
  const text = rationale.trim();
  if (text.length < 10)
    return {
      ok: false,
      message:
        "Say in a sentence why this column is not an identifier (at least 10 characters), for example: pseudonymous subject code assigned by the study.",
    };
  const row = await hitInStudy(studyId, hitId);
  if (!row) return { ok: false, message: "That screen result is not in this study." };
  if (row.v.status !== "draft")
    return {
      ok: false,
      message: `Version ${row.v.version} is ${row.v.status}; screen decisions are made on the current draft only.`,
    };
  if (row.h.resolution)
    return {
      ok: false,
      message: `This hit was already resolved (${row.h.resolution === "removed" ? "column removed" : "not an identifier"}).`,
    };
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
async function bytesWithout(
  v: DatasetVersionRow,
  parsed: StoredColumns,
  column: string,
): Promise<{ bytes: Buffer; format: DatasetFormat; fileName: string }> {
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
      return {
        bytes: Buffer.from([JSON.stringify(meta), ...rows].join("\n") + "\n", "utf8"),
        format: "dataset-json",
        fileName: v.fileName,
      };
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
  return {
    bytes: Buffer.from(stringify(records, { record_delimiter: "\n" }), "utf8"),
    format: "csv",
    fileName: v.fileName.replace(/\.[^.]*$/, "") + ".csv",
  };
}

/**
 * Removes a flagged column: writes a new draft version derived from this one without the
 * column, records what was removed, and carries the other screen results over.
 */
export async function removeFlaggedColumn(
  actor: Actor,
  studyId: string,
  hitId: string,
): Promise<ActionResult<{ versionId: string; version: number }>> {
  const row = await hitInStudy(studyId, hitId);
  if (!row) return { ok: false, message: "That screen result is not in this study." };
  const { v, h } = row;
  if (v.status !== "draft")
    return {
      ok: false,
      message: `Version ${v.version} is ${v.status}; columns are removed from the current draft only.`,
    };
  const parsed = await parsedOf(v);
  const meta = JSON.parse(v.columnsJson) as ColumnMeta[];
  if (parsed.names.length === 1)
    return {
      ok: false,
      message: `"${h.column}" is the only column; a dataset without columns cannot be stored.`,
    };
  const key = JSON.parse(v.keyColumnsJson) as string[];
  if (key.includes(h.column)) {
    return {
      ok: false,
      message: `"${h.column}" is part of the dataset's key (${key.join(", ")}). Records could no longer be told apart; record why it is not an identifier instead, or replace it with a pseudonymous code and upload again.`,
    };
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
    const removed = [
      ...(v.removedColumnsJson ? (JSON.parse(v.removedColumnsJson) as string[]) : []),
      h.column,
    ];
    // Net changes against the latest locked version, compared afresh: a column the upload added
    // and the screen then removed is neither added nor removed.
    const locked = await latestLocked(v.datasetId);
    let changes: ChangeSummary | null = null;
    if (locked) {
      const before = await parsedOf(locked);
      changes = summariseChanges(
        {
          version: locked.version,
          names: before.names,
          cells: before.columns.map(textOf),
          keyColumns: JSON.parse(locked.keyColumnsJson) as string[],
        },
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
      await tx
        .update(t.identifierScreenHits)
        .set({ resolution: "removed", resolvedBy: actor.id, resolvedAt: isoNow() })
        .where(eq(t.identifierScreenHits.id, h.id));
      const others = await tx
        .select()
        .from(t.identifierScreenHits)
        .where(eq(t.identifierScreenHits.datasetVersionId, v.id));
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
          after: {
            version,
            sha256,
            derivedFrom: v.version,
            removedColumn: h.column,
            rule: h.rule,
            columns: derived.names.length,
          },
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
export async function lockVersion(
  actor: Signer,
  studyId: string,
  versionId: string,
): Promise<ActionResult<{ sha256: string }>> {
  const row = await versionInStudy(studyId, versionId);
  if (!row) return { ok: false, message: "That dataset version is not in this study." };
  const { v, d } = row;
  if (v.status !== "draft")
    return {
      ok: false,
      message: `Version ${v.version} of ${d.name} is ${v.status}; only the current draft can be locked.`,
    };
  const open = await db
    .select({ column: t.identifierScreenHits.column })
    .from(t.identifierScreenHits)
    .where(and(eq(t.identifierScreenHits.datasetVersionId, v.id), isNull(t.identifierScreenHits.resolution)));
  if (open.length > 0) {
    const columns = [...new Set(open.map((o) => o.column))];
    return {
      ok: false,
      message: `Resolve the identifier screen first: ${columns.map((c) => `"${c}"`).join(", ")} ${columns.length === 1 ? "is" : "are"} still flagged. Remove the column or record why it is not an identifier.`,
    };
  }
  requireFreshSignIn(actor);
  const actual = await sha256OfFile(absoluteStorePath(v.storedPath));
  if (actual !== v.sha256)
    return {
      ok: false,
      message: `The stored file of version ${v.version} no longer matches its SHA-256 (${v.sha256}); the store was changed outside Plumbline. Upload the file again.`,
    };
  const lockedAt = isoNow();
  return writeTransaction(async (tx) => {
    const [current] = await tx
      .select({ status: t.datasetVersions.status })
      .from(t.datasetVersions)
      .where(eq(t.datasetVersions.id, v.id));
    if (current?.status !== "draft")
      return { ok: false as const, message: `Version ${v.version} was ${current?.status} meanwhile.` };
    await tx
      .update(t.datasetVersions)
      .set({ status: "locked", lockedBy: actor.id, lockedAt })
      .where(eq(t.datasetVersions.id, v.id));
    await appendAudit(
      {
        actor,
        action: "dataset.lock",
        entityType: "dataset_version",
        entityId: v.id,
        studyId,
        before: { status: "draft" },
        after: {
          status: "locked",
          dataset: d.name,
          version: v.version,
          sha256: v.sha256,
          rows: v.rowCount,
          lockedAt,
          signature: signatureEvidence("dataset", actor, lockedAt),
        },
      },
      tx,
    );
    return { ok: true as const, sha256: v.sha256 };
  });
}

/** Whether a version may be purged: superseded, never locked, not purged yet; else why not. */
export function purgeRefusal(
  v: Pick<DatasetVersionRow, "version" | "status" | "lockedAt" | "purgedAt">,
): string | null {
  if (v.purgedAt) return `Version ${v.version} was already purged.`;
  if (v.status !== "superseded")
    return `Version ${v.version} is ${v.status}; only a superseded version can be purged.`;
  if (v.lockedAt) return `Version ${v.version} was locked once; a locked version's bytes are kept for good.`;
  return null;
}

/**
 * Purges a superseded version that was never locked: removes its stored bytes and parsed
 * columns (only when no other unpurged version holds the same bytes) and keeps its row,
 * screen results and audit history, marked purged. Asks for an explicit confirmation.
 */
export async function purgeVersion(
  actor: Actor,
  studyId: string,
  versionId: string,
  confirmed: boolean,
): Promise<ActionResult<{ removedFiles: string[] }>> {
  const row = await versionInStudy(studyId, versionId);
  if (!row) return { ok: false, message: "That dataset version is not in this study." };
  const { v, d } = row;
  const refusal = purgeRefusal(v);
  if (refusal) return { ok: false, message: refusal };
  if (!confirmed)
    return {
      ok: false,
      message: `Confirm that version ${v.version} of ${d.name} and its stored file are to be removed for good (tick the box), then purge.`,
    };
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
      .where(
        and(
          ne(t.datasetVersions.id, v.id),
          isNull(t.datasetVersions.purgedAt),
          eq(t.datasetVersions.sha256, v.sha256),
        ),
      )
      .limit(1);
    const removable = sharing.length > 0 ? [] : paths;
    await tx
      .update(t.datasetVersions)
      .set({ purgedAt, purgedBy: actor.id })
      .where(eq(t.datasetVersions.id, v.id));
    await appendAudit(
      {
        actor,
        action: "dataset.purge",
        entityType: "dataset_version",
        entityId: v.id,
        studyId,
        before: { status: v.status, storedPath: v.storedPath, parsedPath: v.parsedPath },
        after: {
          dataset: d.name,
          version: v.version,
          sha256: v.sha256,
          byteSize: v.byteSize,
          removedFiles: removable,
          keptFiles: paths.filter((p) => !removable.includes(p)),
          purgedAt,
        },
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
