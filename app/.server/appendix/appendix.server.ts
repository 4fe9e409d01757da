/**
 * Exporting the Word appendix: the content model built from signed results, rendered to .docx,
 * stored content-addressed under DATA_DIR (appendices/<aa>/<sha256>.docx) with its SHA-256 in
 * the `appendices` table and an `appendix.export` audit event in the same transaction. The
 * same signed reruns and narrative give the same bytes, so a second export has the same hash.
 */
import { createHash, randomBytes } from "node:crypto";
import { mkdir, readFile, rename, rm, stat, writeFile } from "node:fs/promises";
import path from "node:path";
import { and, desc, eq } from "drizzle-orm";
import { data } from "react-router";
import { CAUTION } from "~/shared/caution";
import { appendAudit, canonicalJson } from "../audit.server";
import { config } from "../config.server";
import { db, isoNow, newId, t, writeTransaction } from "../db/index.server";
import { notifyAppendixExported } from "../mail/notifications.server";
import { describeStorageError, isStorageError, STORAGE_ADVICE } from "../storage-errors.server";
import type { PersonActor } from "../people.server";
import { buildAppendixContent, type AppendixScope } from "./build-content.server";
import { renderDocxTask } from "../compute/pool.server";

export type StoredAppendix = typeof t.appendices.$inferSelect;

export const DOCX_TYPE = "application/vnd.openxmlformats-officedocument.wordprocessingml.document";

export function appendixRelativePath(sha256: string): string {
  return path.join("appendices", sha256.slice(0, 2), `${sha256}.docx`);
}

/** An export that could not be stored: the data folder is full or not writable. Nothing was kept. */
export class AppendixRefused extends Error {
  readonly status = 507;
}

/**
 * Writes the bytes to a work file of their own beside the target and renames it into place;
 * on any error the work file is removed and the error passes on. True when this call put a new
 * file in place. A target that exists but is not these bytes' file (a folder, a truncated
 * file) is replaced, or the rename fails and says so.
 */
async function storeBytes(bytes: Buffer, relative: string): Promise<boolean> {
  const target = path.resolve(config.DATA_DIR, relative);
  const existing = await stat(target).catch(() => null);
  if (existing?.isFile() && existing.size === bytes.length) return false;
  await mkdir(path.dirname(target), { recursive: true });
  const work = `${target}.${process.pid}.${randomBytes(6).toString("hex")}.part`;
  try {
    await writeFile(work, bytes, { flag: "wx" });
    await rename(work, target);
  } catch (e) {
    await rm(work, { force: true }).catch(() => undefined);
    throw e;
  }
  return true;
}

/** Records a refused export in the audit trail; a failure to record it (full disk) is only logged. */
async function auditRefusal(
  actor: PersonActor,
  studyId: string,
  scope: AppendixScope,
  reason: string,
): Promise<void> {
  await appendAudit({
    actor,
    action: "appendix.export_refused",
    entityType: "appendix",
    studyId,
    after: { scope: scope.kind },
    detail: reason,
  }).catch((e: unknown) =>
    console.error(
      "Could not record a refused appendix export in the audit trail:",
      e instanceof Error ? e.message : e,
    ),
  );
}

/** Builds and renders the appendix without storing it (the same bytes an export stores). */
export async function renderAppendix(studyId: string, scope: AppendixScope) {
  const content = await buildAppendixContent(studyId, scope);
  // rendering (figures drawn, fonts subset, the package zipped) runs in a compute thread
  const bytes = await renderDocxTask(content);
  return { content, bytes, sha256: createHash("sha256").update(bytes).digest("hex") };
}

/**
 * Exports, stores and records the appendix; returns the stored row. When the file or its record
 * cannot be written (full or read-only data folder) it throws AppendixRefused, having removed
 * what it wrote: no file without its record, no record without its file.
 */
export async function exportAppendix(
  actor: PersonActor,
  studyId: string,
  scope: AppendixScope,
): Promise<StoredAppendix> {
  const { content, bytes, sha256 } = await renderAppendix(studyId, scope);
  const storedPath = appendixRelativePath(sha256);
  let placed = false;
  try {
    placed = await storeBytes(bytes, storedPath);
    return await writeTransaction(async (tx) => {
      const row: StoredAppendix = {
        id: newId(),
        studyId,
        planVersionId: content.planVersionId,
        rerunIdsJson: canonicalJson(content.rerunIds),
        sha256,
        storedPath,
        byteSize: bytes.length,
        exportedBy: actor.id,
        exportedAt: isoNow(),
      };
      await tx.insert(t.appendices).values(row);
      await appendAudit(
        {
          actor,
          action: "appendix.export",
          entityType: "appendix",
          entityId: row.id,
          studyId,
          after: {
            sha256,
            byteSize: row.byteSize,
            planVersionId: row.planVersionId,
            rerunIds: content.rerunIds,
            scope: content.scope.kind,
          },
        },
        tx,
      );
      await notifyAppendixExported(tx, { studyId, appendixId: row.id, rerunIds: content.rerunIds });
      return row;
    });
  } catch (e) {
    if (placed) {
      // Keep a file an earlier export's record points to; drop one only this export wrote.
      const [other] = await db
        .select({ id: t.appendices.id })
        .from(t.appendices)
        .where(eq(t.appendices.storedPath, storedPath))
        .limit(1)
        .catch(() => [{ id: "unknown" }]);
      if (!other) await rm(path.resolve(config.DATA_DIR, storedPath), { force: true }).catch(() => undefined);
    }
    const reason = `The appendix could not be stored: ${isStorageError(e) ? describeStorageError(e) : e instanceof Error ? e.message : String(e)}. ${STORAGE_ADVICE}`;
    await auditRefusal(actor, studyId, scope, reason);
    if (
      isStorageError(e) ||
      /SQLITE_(FULL|IOERR|READONLY|CANTOPEN)/.test(
        String((e as { code?: unknown })?.code ?? (e as Error)?.message),
      )
    )
      throw new AppendixRefused(reason);
    throw e;
  }
}

export interface AppendixListing extends StoredAppendix {
  rerunIds: string[];
  exportedByName: string | null;
}

export async function listAppendices(studyId: string): Promise<AppendixListing[]> {
  const rows = await db
    .select({ a: t.appendices, who: t.people.displayName })
    .from(t.appendices)
    .leftJoin(t.people, eq(t.people.id, t.appendices.exportedBy))
    .where(eq(t.appendices.studyId, studyId))
    .orderBy(desc(t.appendices.exportedAt));
  return rows.map(({ a, who }) => ({
    ...a,
    rerunIds: JSON.parse(a.rerunIdsJson) as string[],
    exportedByName: who,
  }));
}

const notFound = () =>
  data(
    { message: "There is no such appendix in this study. Export one from the appendix page first." },
    { status: 404 },
  );

/** A stored export by id, or the newest export that contains the given rerun. */
export async function findAppendix(
  studyId: string,
  by: { id: string } | { rerunId: string },
): Promise<StoredAppendix> {
  if ("id" in by) {
    const [row] = await db
      .select()
      .from(t.appendices)
      .where(and(eq(t.appendices.id, by.id), eq(t.appendices.studyId, studyId)))
      .limit(1);
    if (!row) throw notFound();
    return row;
  }
  const all = await listAppendices(studyId);
  const hit = all.find((a) => a.rerunIds.includes(by.rerunId));
  if (!hit) throw notFound();
  return hit;
}

/** True when every rerun of the appendix is published (signed), so sponsor readers may read it. */
export async function appendixIsPublished(a: StoredAppendix): Promise<boolean> {
  const ids = JSON.parse(a.rerunIdsJson) as string[];
  for (const id of ids) {
    const [r] = await db
      .select({ publishedAt: t.reruns.publishedAt, studyId: t.reruns.studyId })
      .from(t.reruns)
      .where(eq(t.reruns.id, id))
      .limit(1);
    if (!r || !r.publishedAt || r.studyId !== a.studyId) return false;
  }
  return ids.length > 0;
}

/** The stored bytes, checked against the recorded SHA-256. */
export async function appendixBytes(a: StoredAppendix): Promise<Buffer> {
  const bytes = await readFile(path.resolve(config.DATA_DIR, a.storedPath));
  const sha = createHash("sha256").update(bytes).digest("hex");
  if (sha !== a.sha256)
    throw new Error(
      `The stored appendix ${a.id} no longer matches its recorded SHA-256; restore it from backup or export it again.`,
    );
  return bytes;
}

export function appendixFileName(a: StoredAppendix, studyCode: string): string {
  return `${studyCode}-appendix-${a.exportedAt.slice(0, 10)}-${a.sha256.slice(0, 8)}.docx`;
}

/**
 * The stored file as a download, for the download page and the API alike: exactly the recorded
 * bytes, named for the study, with the SHA-256 as ETag and in a header of its own. A file has no
 * JSON body for the caution, so it travels in a header too (and is printed in the document).
 */
export async function appendixDownload(a: StoredAppendix, studyCode: string): Promise<Response> {
  const bytes = await appendixBytes(a);
  return new Response(new Uint8Array(bytes), {
    headers: {
      "Content-Type": DOCX_TYPE,
      "Content-Length": String(bytes.length),
      "Content-Disposition": `attachment; filename="${appendixFileName(a, studyCode)}"`,
      "Cache-Control": "private, no-store",
      ETag: `"${a.sha256}"`,
      "X-Content-SHA256": a.sha256,
      "X-Caution": CAUTION,
    },
  });
}
