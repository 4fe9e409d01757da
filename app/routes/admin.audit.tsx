import { data, Form } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/admin.audit";
import { PageHeader } from "~/components/page";
import { StatusLabel } from "~/components/status";
import { auditKeySource, listAuditEvents, verifyAuditChain } from "~/.server/audit.server";
import { requireAdmin } from "~/.server/permissions.server";
import { listStudiesFor } from "~/.server/studies.server";

export function meta() {
  return [{ title: "Audit trail · Plumbline" }];
}

const Filter = z.object({
  study: z.string().max(80, "The study filter names no study; choose one from the list.").optional(),
  action: z.string().trim().max(60, "“Action starts with” takes at most 60 characters.").optional(),
  actor: z.string().trim().max(120, "“Who” takes at most 120 characters.").optional(),
  from: z.string().regex(/^\d{4}-\d{2}-\d{2}$/).optional().catch(undefined),
  to: z.string().regex(/^\d{4}-\d{2}-\d{2}$/).optional().catch(undefined),
});

export async function loader({ request }: Route.LoaderArgs) {
  const admin = await requireAdmin(request, "audit.read");
  const params = Object.fromEntries(new URL(request.url).searchParams);
  const parsed = Filter.safeParse(Object.fromEntries(Object.entries(params).filter(([, v]) => v !== "")));
  if (!parsed.success) {
    throw data({ message: `The audit filter was not applied: ${parsed.error.issues.map((i) => i.message).join(" ")} Shorten it and filter again.` }, { status: 400 });
  }
  const filter = parsed.data;
  const [events, verdict, studies] = await Promise.all([
    listAuditEvents({ studyId: filter.study, action: filter.action, actor: filter.actor, from: filter.from, to: filter.to, limit: 500 }),
    verifyAuditChain(),
    listStudiesFor(admin),
  ]);
  const codeOf = new Map(studies.map((s) => [s.id, s.code]));
  return {
    filter,
    verdict,
    keySource: auditKeySource,
    studies: studies.map((s) => ({ id: s.id, code: s.code })),
    events: events.map((e) => ({ ...e, studyCode: e.studyId ? (codeOf.get(e.studyId) ?? e.studyId) : null })),
  };
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
  const { filter, verdict, events, studies, keySource } = loaderData;
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
              The first broken link is event <span className="num font-semibold">{verdict.brokenAtSeq}</span>: {verdict.reason}. Every
              event from there on can no longer be trusted as recorded; keep the database file for investigation.
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
            Record this keyed hash with its time somewhere outside Plumbline (a signed e-mail, the study file). A later check that no longer reaches this head
            means the trail was cut short or rewritten after it.
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
          <input id="f-action" name="action" defaultValue={filter.action ?? ""} className="field w-44" placeholder="auth." />
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
          <input id="f-from" name="from" type="date" defaultValue={filter.from ?? ""} className="field w-40" />
        </div>
        <div>
          <label htmlFor="f-to" className="label">
            To (UTC date)
          </label>
          <input id="f-to" name="to" type="date" defaultValue={filter.to ?? ""} className="field w-40" />
        </div>
        <button type="submit" className="btn-quiet">
          Filter
        </button>
      </Form>
      <div className="overflow-x-auto">
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
                  {e.entityId ? <span className="block font-mono text-ink-soft">{e.entityId.slice(0, 8)}</span> : null}
                </td>
                <td>{e.studyCode ?? "—"}</td>
                <td className="max-w-xs break-words font-mono text-xs">{change(e.beforeJson, e.afterJson)}</td>
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
    </main>
  );
}
