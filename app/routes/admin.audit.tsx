import { Form, Link } from "react-router";
import type { Route } from "./+types/admin.audit";
import { PageHeader } from "~/components/page";
import { StatusLabel } from "~/components/status";
import { auditKeySource, verifyAuditChain } from "~/.server/audit.server";
import { AUDIT_PAGE_SIZES, auditPage, readAuditQuery } from "~/.server/audit-trail.server";
import { requireAdmin } from "~/.server/permissions.server";
import { listStudiesFor } from "~/.server/studies.server";

export function meta() {
  return [{ title: "Audit trail · Plumbline" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  const admin = await requireAdmin(request, "audit.read");
  const query = readAuditQuery(new URL(request.url));
  const [{ events, paging }, verdict, studies] = await Promise.all([
    auditPage(query),
    verifyAuditChain(),
    listStudiesFor(admin),
  ]);
  const codeOf = new Map(studies.map((s) => [s.id, s.code]));
  const { page: _page, size: _size, ...filter } = query;
  return {
    filter,
    paging,
    sizes: [...AUDIT_PAGE_SIZES],
    verdict,
    keySource: auditKeySource,
    studies: studies.map((s) => ({ id: s.id, code: s.code })),
    events: events.map((e) => ({ ...e, studyCode: e.studyId ? (codeOf.get(e.studyId) ?? e.studyId) : null })),
  };
}

/** The query string of the page with these filters, page and size (empty values left out). */
function hrefOf(
  filter: Record<string, string | undefined>,
  extra: Record<string, string | number>,
  path = "/admin/audit",
): string {
  const params = new URLSearchParams();
  for (const [k, v] of Object.entries({ ...filter, ...extra }))
    if (v !== undefined && v !== "") params.set(k, String(v));
  const qs = params.toString();
  return qs ? `${path}?${qs}` : path;
}

/** Links to the first, previous, next and last page, and the page size; the current page is marked for assistive technology. */
function Pager({
  filter,
  paging,
  sizes,
  position,
}: {
  filter: Record<string, string | undefined>;
  sizes: number[];
  paging: { page: number; pages: number; size: number; total: number; first: number; last: number };
  position: "top" | "bottom";
}) {
  const { page, pages, size } = paging;
  const link = (to: number, label: string, rel?: string) =>
    to < 1 || to > pages || to === page ? (
      <span className="px-2 py-1 text-ink-soft" aria-disabled="true">
        {label}
      </span>
    ) : (
      <Link to={hrefOf(filter, { page: to, size })} rel={rel} className="px-2 py-1">
        {label}
      </Link>
    );
  return (
    <nav
      aria-label={`Audit trail pages${position === "bottom" ? " (end of the list)" : ""}`}
      className="my-3 flex flex-wrap items-center justify-between gap-3 text-sm"
    >
      <p className="num" aria-live={position === "top" ? "polite" : undefined}>
        {`${paging.total === 0 ? "No events" : `Events ${paging.first}–${paging.last} of ${paging.total}`} · page ${page} of ${pages}`}
      </p>
      <ul className="flex flex-wrap items-center gap-1">
        <li>{link(1, "First")}</li>
        <li>{link(page - 1, "Previous", "prev")}</li>
        <li>
          <span aria-current="page" className="num px-2 py-1 font-semibold">
            {page}
          </span>
        </li>
        <li>{link(page + 1, "Next", "next")}</li>
        <li>{link(pages, "Last")}</li>
      </ul>
      {position === "top" ? (
        <p className="flex items-center gap-1">
          <span className="text-ink-soft">Per page:</span>
          {sizes.map((n) =>
            n === size ? (
              <span key={n} aria-current="true" className="num px-1 font-semibold">
                {n}
              </span>
            ) : (
              <Link
                key={n}
                to={hrefOf(filter, { size: n })}
                className="num px-1"
                aria-label={`${n} events per page`}
              >
                {n}
              </Link>
            ),
          )}
        </p>
      ) : null}
    </nav>
  );
}

/** `key: value` pairs of a recorded JSON object, each value cut to a readable length. */
function pairs(json: string | null): string {
  if (!json) return "∅";
  const value: unknown = JSON.parse(json);
  if (!value || typeof value !== "object" || Array.isArray(value)) return json;
  return Object.entries(value)
    .map(([k, v]) => {
      const text = typeof v === "string" ? v : JSON.stringify(v);
      return `${k}: ${text.length > 60 ? `${text.slice(0, 57)}…` : text}`;
    })
    .join("; ");
}

function change(before: string | null, after: string | null): string {
  if (!before && !after) return "";
  if (!before) return pairs(after);
  return `${pairs(before)} → ${pairs(after)}`;
}

export default function AuditTrail({ loaderData }: Route.ComponentProps) {
  const { filter, verdict, events, studies, keySource, paging, sizes } = loaderData;
  return (
    <main>
      <PageHeader eyebrow="Administration" title="Audit trail" />
      <section className="panel mb-4 flex flex-wrap items-center gap-3 p-3" aria-live="polite">
        {verdict.intact ? (
          <>
            <StatusLabel status="within" word="Chain verified" />
            <span className="num text-sm">
              All {verdict.events} events link to their predecessors and match their hashes and keyed hashes.
            </span>
          </>
        ) : (
          <>
            <StatusLabel status="finding" word="Chain broken" />
            <span className="text-sm">
              The first broken link is event <span className="num font-semibold">{verdict.brokenAtSeq}</span>:{" "}
              {verdict.reason}. Every event from there on can no longer be trusted as recorded; keep the
              database file for investigation.
            </span>
          </>
        )}
      </section>
      {verdict.head ? (
        <section className="panel mb-4 p-3 text-sm" aria-labelledby="head-h">
          <h2 id="head-h" className="mb-1 text-base">
            Head of the chain
          </h2>
          <p className="mb-2">
            Record this keyed hash with its time somewhere outside Plumbline (a signed e-mail, the study
            file). A later check that no longer reaches this head means the trail was cut short or rewritten
            after it.
          </p>
          <dl className="grid grid-cols-[max-content_1fr] gap-x-4 gap-y-1">
            <dt className="font-semibold">Event</dt>
            <dd className="num" data-testid="head-seq">
              {verdict.head.seq}
            </dd>
            <dt className="font-semibold">Recorded at</dt>
            <dd className="num" data-testid="head-at">
              {verdict.head.at}
            </dd>
            <dt className="font-semibold">Keyed hash (HMAC-SHA256)</dt>
            <dd className="num break-all font-mono" data-testid="head-mac">
              {verdict.head.mac ?? "none: this event carries no keyed hash"}
            </dd>
            <dt className="font-semibold">Audit key</dt>
            <dd className="break-all">{keySource}</dd>
          </dl>
        </section>
      ) : null}
      <Form method="get" className="mb-4 flex flex-wrap items-end gap-3" aria-label="Filter the audit trail">
        <div>
          <label htmlFor="f-study" className="label">
            Study
          </label>
          <select id="f-study" name="study" defaultValue={filter.study ?? ""} className="field w-40">
            <option value="">Any</option>
            {studies.map((s) => (
              <option key={s.id} value={s.id}>
                {s.code}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="f-action" className="label">
            Action starts with
          </label>
          <input
            id="f-action"
            name="action"
            defaultValue={filter.action ?? ""}
            className="field w-44"
            placeholder="auth."
          />
        </div>
        <div>
          <label htmlFor="f-actor" className="label">
            Who
          </label>
          <input id="f-actor" name="actor" defaultValue={filter.actor ?? ""} className="field w-44" />
        </div>
        <div>
          <label htmlFor="f-from" className="label">
            From (UTC date)
          </label>
          <input
            id="f-from"
            name="from"
            type="date"
            defaultValue={filter.from ?? ""}
            className="field w-40"
          />
        </div>
        <div>
          <label htmlFor="f-to" className="label">
            To (UTC date)
          </label>
          <input id="f-to" name="to" type="date" defaultValue={filter.to ?? ""} className="field w-40" />
        </div>
        {paging.size !== sizes[0] ? <input type="hidden" name="size" value={paging.size} /> : null}
        <button type="submit" className="btn-quiet">
          Filter
        </button>
        {/* a plain link: the export is a file download, audited on the server */}
        <a
          href={hrefOf(filter, {}, "/admin/audit/export.csv")}
          className="btn-quiet no-underline hover:no-underline"
          download
        >
          Export as CSV ({paging.total} events, with chain hashes)
        </a>
      </Form>
      <Pager filter={filter} paging={paging} sizes={sizes} position="top" />
      <div className="overflow-x-auto" role="region" aria-label="Audit events" tabIndex={0}>
        <table className="data-table panel">
          <thead>
            <tr>
              <th scope="col" className="text-right">
                #
              </th>
              <th scope="col">When (UTC)</th>
              <th scope="col">Who</th>
              <th scope="col">Action</th>
              <th scope="col">Record</th>
              <th scope="col">Study</th>
              <th scope="col">Change</th>
              <th scope="col">Detail</th>
            </tr>
          </thead>
          <tbody>
            {events.map((e) => (
              <tr key={e.seq}>
                <td className="num text-right">{e.seq}</td>
                <td className="num whitespace-nowrap">{e.at.slice(0, 19).replace("T", " ")}</td>
                <td>{e.actorName}</td>
                <td className="font-mono text-xs">{e.action}</td>
                <td className="text-xs">
                  {e.entityType}
                  {e.entityId ? (
                    <span className="block font-mono text-ink-soft">{e.entityId.slice(0, 8)}</span>
                  ) : null}
                </td>
                <td>{e.studyCode ?? "—"}</td>
                <td className="max-w-xs break-words font-mono text-xs">
                  {change(e.beforeJson, e.afterJson)}
                </td>
                <td className="text-xs">{e.detail}</td>
              </tr>
            ))}
            {events.length === 0 ? (
              <tr>
                <td colSpan={8} className="text-ink-soft">
                  No events match these filters.
                </td>
              </tr>
            ) : null}
          </tbody>
        </table>
      </div>
      {paging.pages > 1 ? <Pager filter={filter} paging={paging} sizes={sizes} position="bottom" /> : null}
    </main>
  );
}
