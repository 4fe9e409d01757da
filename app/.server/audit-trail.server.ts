/**
 * The audit trail as administrators read it: the filter and paging of the audit page, and its
 * export as CSV with each event's chain hash and keyed hash (MAC), so the chain can be checked
 * outside Plumbline. Values are exported exactly as stored and hashed (no cell is altered), so
 * a verifier recomputes the same hashes. An export is itself audited (`audit.export`), as
 * appendix exports are.
 */
import { createHash } from "node:crypto";
import { stringify } from "csv-stringify/sync";
import { data } from "react-router";
import { z } from "zod";
import { appendAudit, countAuditEvents, listAuditEvents, type AuditFilter } from "./audit.server";
import type { PersonActor } from "./people.server";

/** Page sizes the audit page offers; the first is the default. */
export const AUDIT_PAGE_SIZES = [50, 100, 200] as const;

const Query = z.object({
  study: z.string().max(80, "The study filter names no study; choose one from the list.").optional(),
  action: z.string().trim().max(60, "“Action starts with” takes at most 60 characters.").optional(),
  actor: z.string().trim().max(120, "“Who” takes at most 120 characters.").optional(),
  from: z
    .string()
    .regex(/^\d{4}-\d{2}-\d{2}$/)
    .optional()
    .catch(undefined),
  to: z
    .string()
    .regex(/^\d{4}-\d{2}-\d{2}$/)
    .optional()
    .catch(undefined),
  page: z.coerce.number().int().min(1).optional().catch(undefined),
  size: z.coerce
    .number()
    .refine((n) => (AUDIT_PAGE_SIZES as readonly number[]).includes(n))
    .optional()
    .catch(undefined),
});
export type AuditQuery = z.infer<typeof Query>;

/** The page's query string read and checked: filters, page and page size. Refuses (400) a filter it cannot apply. */
export function readAuditQuery(url: URL): AuditQuery {
  const params = Object.fromEntries([...url.searchParams].filter(([, v]) => v !== ""));
  const parsed = Query.safeParse(params);
  if (!parsed.success) {
    throw data(
      {
        message: `The audit filter was not applied: ${parsed.error.issues.map((i) => i.message).join(" ")} Shorten it and filter again.`,
      },
      { status: 400 },
    );
  }
  return parsed.data;
}

const filterOf = (q: AuditQuery): AuditFilter => ({
  studyId: q.study,
  action: q.action,
  actor: q.actor,
  from: q.from,
  to: q.to,
});

/** One page of the filtered trail, newest first, with where it sits among the matching events. */
export async function auditPage(q: AuditQuery) {
  const size = q.size ?? AUDIT_PAGE_SIZES[0];
  const total = await countAuditEvents(filterOf(q));
  const pages = Math.max(1, Math.ceil(total / size));
  const page = Math.min(q.page ?? 1, pages);
  const events = await listAuditEvents({ ...filterOf(q), limit: size, offset: (page - 1) * size });
  return {
    events,
    paging: {
      page,
      pages,
      size,
      total,
      first: total === 0 ? 0 : (page - 1) * size + 1,
      last: (page - 1) * size + events.length,
    },
  };
}

export const AUDIT_CSV_COLUMNS = [
  "seq",
  "at",
  "actor_id",
  "actor_name",
  "action",
  "entity_type",
  "entity_id",
  "study_id",
  "before_json",
  "after_json",
  "detail",
  "prev_hash",
  "hash",
  "mac",
] as const;

/**
 * Every event matching the filters (all pages), oldest first so the chain reads in order, as
 * CSV (RFC 4180, UTF-8, header row). Audited as `audit.export` with the filters, the number of
 * events and the export's SHA-256, after the events were read (so the export does not list itself).
 */
export async function exportAuditCsv(
  actor: PersonActor,
  q: AuditQuery,
): Promise<{ csv: string; sha256: string; events: number; fileName: string }> {
  const filter = filterOf(q);
  const events = (await listAuditEvents({ ...filter, limit: null })).reverse();
  const csv = stringify(
    events.map((e) => [
      e.seq,
      e.at,
      e.actorId,
      e.actorName,
      e.action,
      e.entityType,
      e.entityId,
      e.studyId,
      e.beforeJson,
      e.afterJson,
      e.detail,
      e.prevHash,
      e.hash,
      e.mac,
    ]),
    {
      header: true,
      columns: [...AUDIT_CSV_COLUMNS],
      record_delimiter: "\r\n",
      cast: { number: (n) => String(n) },
    },
  );
  const sha256 = createHash("sha256").update(csv).digest("hex");
  const at = new Date().toISOString();
  const applied = Object.fromEntries(Object.entries(filter).filter(([, v]) => v !== undefined));
  await appendAudit({
    actor,
    action: "audit.export",
    entityType: "audit_trail",
    after: {
      filter: applied,
      events: events.length,
      firstSeq: events[0]?.seq ?? null,
      lastSeq: events.at(-1)?.seq ?? null,
      sha256,
    },
  });
  return {
    csv,
    sha256,
    events: events.length,
    fileName: `plumbline-audit-trail-${at.slice(0, 19).replace(/[-:]/g, "")}Z.csv`,
  };
}
