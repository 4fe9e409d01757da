/**
 * Reading reruns: the one query of a rerun with its planned model, dataset version, dataset,
 * plan version and who started it, and the stored result parsed once per result hash. The
 * listings, the results and report pages, the API and the redaction read reruns through here.
 */
import { and, desc, eq, getTableColumns, sql, type SQL } from "drizzle-orm";
import { LRUCache } from "lru-cache";
import { data } from "react-router";
import { db, t } from "../db/index.server";
import type { WhatIfInputs } from "~/components/figures/what-if-inputs";
import { config } from "../config.server";
import type { RerunDocument } from "./compute-rerun";
import type { PageDerived } from "./derive-page";
import { readDerivedFile } from "./derived-files";
import type { ViewDocument } from "./page-document";
import { storedResultJson, verifyStoredResult } from "./result-store.server";

/**
 * Every column of a rerun but `result_json`, where results were stored before they moved to
 * files (one of a large rerun is hundreds of MB): select these, and read the result with
 * `storedRerunDocument`.
 */
const { resultJson: _resultJson, ...rerunWithoutResult } = getTableColumns(t.reruns);
export const rerunColumns = rerunWithoutResult;

/** A rerun row as read (without the former result column). */
export type RerunRecord = Omit<typeof t.reruns.$inferSelect, "resultJson">;

/**
 * The reruns that meet `where` (on the five tables), in `order`, each with its planned model
 * (`m`), dataset version (`dv`), dataset (`d`), plan version (`pv`) and starter's name (`who`);
 * never their stored results (read those with `storedRerunDocument`).
 */
export function rerunRows(where: SQL | undefined, ...order: SQL[]) {
  return db
    .select({
      r: rerunWithoutResult,
      m: t.plannedModels,
      dv: t.datasetVersions,
      d: t.datasets,
      pv: t.planVersions,
      who: t.people.displayName,
    })
    .from(t.reruns)
    .innerJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
    .innerJoin(t.datasetVersions, eq(t.datasetVersions.id, t.reruns.datasetVersionId))
    .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
    .innerJoin(t.planVersions, eq(t.planVersions.id, t.reruns.planVersionId))
    .leftJoin(t.people, eq(t.people.id, t.reruns.startedBy))
    .where(where)
    .orderBy(...order);
}

export type RerunRow = Awaited<ReturnType<typeof rerunRows>>[number];

/**
 * The same reruns for lists (the reruns page, the API's list): each rerun's own columns, and of
 * its planned model, plan version, dataset and version only what a list names (ids, key, title,
 * name, version numbers, hash), and its number of findings. Lists are read many times a minute; the model's specification,
 * the version's column descriptions and the plan are most of the bytes `rerunRows` reads.
 */
export function rerunListRows(where: SQL | undefined, ...order: SQL[]) {
  return db
    .select({
      r: rerunWithoutResult,
      m: { id: t.plannedModels.id, key: t.plannedModels.key, title: t.plannedModels.title },
      dv: { id: t.datasetVersions.id, version: t.datasetVersions.version, sha256: t.datasetVersions.sha256 },
      d: { name: t.datasets.name },
      pv: { id: t.planVersions.id, version: t.planVersions.version },
      who: t.people.displayName,
      // counted in the same statement (index findings_rerun)
      findings:
        sql<number>`(select count(*) from ${t.findings} where ${t.findings.rerunId} = ${t.reruns.id})`.mapWith(
          Number,
        ),
    })
    .from(t.reruns)
    .innerJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
    .innerJoin(t.datasetVersions, eq(t.datasetVersions.id, t.reruns.datasetVersionId))
    .innerJoin(t.datasets, eq(t.datasets.id, t.datasetVersions.datasetId))
    .innerJoin(t.planVersions, eq(t.planVersions.id, t.reruns.planVersionId))
    .leftJoin(t.people, eq(t.people.id, t.reruns.startedBy))
    .where(where)
    .orderBy(...order);
}

export type RerunListRow = Awaited<ReturnType<typeof rerunListRows>>[number];

/** A study's reruns for its lists, newest first: the query is built once (prepared). */
const studyRerunList = rerunListRows(
  eq(t.reruns.studyId, sql.placeholder("studyId")),
  desc(t.reruns.createdAt),
).prepare();

export function studyRerunListRows(studyId: string): Promise<RerunListRow[]> {
  return studyRerunList.all({ studyId });
}

/**
 * Parsed results of completed reruns, keyed by rerun id and result hash: a stored result never
 * changes, and parsing a 10 000-subject result (several MB) for each of a results page's figure
 * requests took most of their time. Frozen, so no reader can change what the next one sees.
 */
const parsedResults = new LRUCache<string, RerunDocument>({ max: 16 });

const resultKey = (id: string, resultSha256: string | null) => `${id}:${resultSha256 ?? ""}`;

function deepFreeze<T>(value: T): T {
  if (value && typeof value === "object" && !Object.isFrozen(value)) {
    Object.freeze(value);
    for (const v of Object.values(value)) deepFreeze(v);
  }
  return value;
}

/**
 * The stored result of a completed rerun (its file, or its row for results stored before;
 * `result-store.server.ts`), checked against its SHA-256 and parsed once per result hash
 * (read-only; null without a result).
 */
export async function storedRerunDocument(row: {
  id: string;
  resultSha256: string | null;
}): Promise<RerunDocument | null> {
  if (!row.resultSha256) return null;
  const key = resultKey(row.id, row.resultSha256);
  const cached = parsedResults.get(key);
  if (cached) return cached;
  const json = await storedResultJson(row);
  if (json === null) return null;
  const doc = deepFreeze(JSON.parse(json) as RerunDocument);
  parsedResults.set(key, doc);
  return doc;
}

/** Page data read from its derived file, by rerun id and result hash (a few hundred kB each). */
const pageData = new LRUCache<string, { doc: ViewDocument; whatIf: WhatIfInputs }>({ max: 32 });

/**
 * What a results page reads of a completed rerun (read-only; null without a result): the page
 * document and what-if inputs the compute thread stored beside the result (`derive-page.ts`),
 * once the result file is checked against its SHA-256, or else the whole parsed document (the
 * what-if inputs then null: made on request). A document already parsed is used as it is.
 */
export async function storedPageData(row: {
  id: string;
  resultSha256: string | null;
}): Promise<{ doc: ViewDocument; whatIf: WhatIfInputs | null } | null> {
  if (!row.resultSha256) return null;
  const key = resultKey(row.id, row.resultSha256);
  const kept = pageData.get(key);
  if (kept) return kept;
  const parsed = parsedResults.get(key);
  if (!parsed) {
    const derived = await readDerivedFile<PageDerived>(config.DATA_DIR, row.resultSha256, "page");
    if (derived?.page && (await verifyStoredResult(row))) {
      const page = deepFreeze({ doc: derived.page, whatIf: derived.whatIf });
      pageData.set(key, page);
      return page;
    }
  }
  const doc = parsed ?? (await storedRerunDocument(row));
  return doc ? { doc, whatIf: null } : null;
}

/** The result as its results page reads it (`storedPageData`), without the what-if inputs. */
export async function storedViewDocument(row: {
  id: string;
  resultSha256: string | null;
}): Promise<ViewDocument | null> {
  return (await storedPageData(row))?.doc ?? null;
}

/** The rerun's row with its planned model, dataset (version), plan version and starter, or a 404. */
async function rerunRow(studyId: string, rerunId: string) {
  const [row] = await rerunRows(and(eq(t.reruns.id, rerunId), eq(t.reruns.studyId, studyId))).limit(1);
  if (!row) throw data({ message: "There is no such rerun in this study." }, { status: 404 });
  return row;
}

function described(row: RerunRow) {
  return {
    rerun: row.r,
    model: { id: row.m.id, key: row.m.key, title: row.m.title },
    dataset: { name: row.d.name, version: row.dv.version, sha256: row.dv.sha256, versionId: row.dv.id },
    planVersion: { id: row.pv.id, version: row.pv.version, title: row.pv.title },
    startedBy: row.who,
  };
}

/** A rerun as its results page reads it: `getRerun` with `storedPageData` in place of the parsed result. */
export async function getRerunPage(studyId: string, rerunId: string) {
  const row = await rerunRow(studyId, rerunId);
  const page = row.r.status === "completed" ? await storedPageData(row.r) : null;
  return { ...described(row), doc: page?.doc ?? null, whatIf: page?.whatIf ?? null };
}

/** A rerun, its model, dataset version, plan version and who started it, with its parsed result (read-only; null until completed). */
export async function getRerun(studyId: string, rerunId: string) {
  const row = await rerunRow(studyId, rerunId);
  const doc = row.r.status === "completed" ? await storedRerunDocument(row.r) : null;
  return { ...described(row), doc };
}
