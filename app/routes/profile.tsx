import { useEffect, useRef } from "react";
import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import { TokenTable } from "~/components/token-table";
import type { Route } from "./+types/profile";
import { utc } from "~/shared/format";
import { FieldError, PageHeader } from "~/components/page";
import {
  createToken,
  EXPIRY_DAYS,
  NewToken,
  revokeToken,
  statusOf,
  tokensOf,
} from "~/.server/api/tokens.server";
import { REQUESTS_PER_MINUTE } from "~/.server/api/rate-limit.server";
import { actorOf } from "~/.server/people.server";
import { ROLE_LABELS } from "~/.server/permissions.server";
import { requireUser } from "~/.server/session.server";
import { listStudiesFor } from "~/.server/studies.server";

export function meta() {
  return [{ title: "Your profile · Plumbline" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  const [studies, tokens] = await Promise.all([
    listStudiesFor({ id: user.id, isAdmin: false }),
    tokensOf(user.id),
  ]);
  const now = Date.now();
  return {
    person: {
      displayName: user.displayName,
      email: user.email,
      organisation: user.organisation,
      isAdmin: user.isAdmin,
    },
    roles: studies
      .filter((s) => s.role)
      .map((s) => ({ code: s.code, title: s.title, role: ROLE_LABELS[s.role!] })),
    tokens: tokens.map((k) => ({
      id: k.id,
      name: k.name,
      prefix: k.prefix,
      createdAt: k.createdAt,
      expiresAt: k.expiresAt,
      lastUsedAt: k.lastUsedAt,
      revokedAt: k.revokedAt,
      status: statusOf(k, now),
    })),
    expiryDays: [...EXPIRY_DAYS],
    perMinute: REQUESTS_PER_MINUTE,
  };
}

const Intent = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("create"), name: z.string(), days: z.string() }),
  z.object({ intent: z.literal("revoke"), tokenId: z.string().min(1) }),
]);

type ActionData =
  | { kind: "created"; token: string; name: string; prefix: string; expiresAt: string }
  | { kind: "revoked" }
  | { kind: "error"; message: string; fieldErrors: Record<string, string> };

export async function action({ request }: Route.ActionArgs) {
  const user = await requireUser(request);
  const parsed = Intent.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success)
    return data<ActionData>(
      {
        kind: "error",
        message: "That request was not understood; reload the page and try again.",
        fieldErrors: {},
      },
      { status: 400 },
    );
  if (parsed.data.intent === "revoke") {
    const r = await revokeToken(actorOf(user), parsed.data.tokenId, "owner");
    return r.ok
      ? data<ActionData>({ kind: "revoked" })
      : data<ActionData>({ kind: "error", message: r.message, fieldErrors: {} }, { status: 404 });
  }
  const input = NewToken.safeParse(parsed.data);
  if (!input.success) {
    const fieldErrors = Object.fromEntries(input.error.issues.map((i) => [String(i.path[0]), i.message]));
    return data<ActionData>(
      { kind: "error", message: "Fix the fields below.", fieldErrors },
      { status: 400 },
    );
  }
  const created = await createToken(actorOf(user), input.data);
  if (!created.ok)
    return data<ActionData>({ kind: "error", message: created.message, fieldErrors: {} }, { status: 409 });
  // The token itself is in this one answer only; keep it out of every cache.
  return data<ActionData>(
    {
      kind: "created",
      token: created.token,
      name: created.row.name,
      prefix: created.row.prefix,
      expiresAt: created.row.expiresAt,
    },
    { headers: { "Cache-Control": "no-store" } },
  );
}

function NewTokenShown({ token, name, expiresAt }: { token: string; name: string; expiresAt: string }) {
  const field = useRef<HTMLInputElement>(null);
  useEffect(() => field.current?.select(), []);
  return (
    <section className="panel mb-6 border-accent p-4" aria-labelledby="new-token-heading">
      <h2 id="new-token-heading" className="mb-2">
        Token “{name}” created
      </h2>
      <p className="mb-2 text-sm">
        Copy it now: Plumbline keeps only its hash and cannot show it again. It expires {utc(expiresAt)}.
      </p>
      <label htmlFor="new-token" className="label">
        Your new API token
      </label>
      <div className="flex gap-2">
        <input
          id="new-token"
          ref={field}
          readOnly
          value={token}
          className="field font-mono"
          spellCheck={false}
          autoComplete="off"
        />
        <button
          type="button"
          className="btn-quiet whitespace-nowrap"
          onClick={() => void navigator.clipboard?.writeText(token)}
        >
          Copy
        </button>
      </div>
      <p className="mt-2 text-xs text-ink-soft">
        Send it as <code>Authorization: Bearer {token.slice(0, 12)}…</code> to <code>/api/v1/</code>. The API
        is described in <a href="/api/v1/openapi.json">/api/v1/openapi.json</a>.
      </p>
    </section>
  );
}

export default function Profile({ loaderData, actionData }: Route.ComponentProps) {
  const { person, roles, tokens, expiryDays, perMinute } = loaderData;
  const navigation = useNavigation();
  const busy = navigation.state === "submitting";
  const errors = actionData?.kind === "error" ? actionData.fieldErrors : {};
  return (
    <main>
      <PageHeader eyebrow="Your profile" title={person.displayName} />
      <div className="grid gap-8 lg:grid-cols-[1fr_22rem]">
        <div className="min-w-0 space-y-6">
          {actionData?.kind === "created" ? (
            <NewTokenShown token={actionData.token} name={actionData.name} expiresAt={actionData.expiresAt} />
          ) : null}
          {actionData?.kind === "error" && Object.keys(errors).length === 0 ? (
            <p className="text-sm font-medium text-finding" role="alert">
              {actionData.message}
            </p>
          ) : null}
          <section>
            <h2 className="mb-2">API tokens</h2>
            <p className="mb-3 max-w-prose text-sm text-ink-soft">
              A token lets a program read what you may read in Plumbline, through the API, with your study
              roles and never more. Each token may make {perMinute} requests a minute. Revoke a token as soon
              as nothing uses it.
            </p>
            <TokenTable tokens={tokens} busy={busy} revokeIntent="revoke" empty="You have no API tokens." />
          </section>
          <section>
            <h2 className="mb-2">Your study roles</h2>
            {roles.length === 0 ? (
              <p className="text-sm text-ink-soft">
                You hold no role on any study yet; a Plumbline administrator gives roles per study.
              </p>
            ) : (
              <ul className="space-y-1 text-sm">
                {roles.map((r) => (
                  <li key={r.code}>
                    <span className="font-semibold">{r.code}</span> · {r.title}: {r.role}
                  </li>
                ))}
              </ul>
            )}
            <p className="mt-3 text-xs text-ink-soft">
              {person.email}
              {person.organisation ? ` · ${person.organisation}` : ""}
              {person.isAdmin ? " · administrator (administration is not available through API tokens)" : ""}
            </p>
          </section>
        </div>
        <section className="panel h-fit p-4">
          <h2 className="mb-3">New API token</h2>
          <Form method="post" className="space-y-3" noValidate>
            <input type="hidden" name="intent" value="create" />
            <div>
              <label htmlFor="token-name" className="label">
                Name
              </label>
              <input
                id="token-name"
                name="name"
                className="field"
                placeholder="e.g. nightly report pipeline"
                aria-invalid={errors.name ? true : undefined}
                aria-describedby={errors.name ? "token-name-error" : undefined}
              />
              <FieldError id="token-name-error" message={errors.name} />
            </div>
            <div>
              <label htmlFor="token-days" className="label">
                Expires after
              </label>
              <select
                id="token-days"
                name="days"
                className="field"
                defaultValue="30"
                aria-describedby={errors.days ? "token-days-error" : undefined}
              >
                {expiryDays.map((d) => (
                  <option key={d} value={d}>
                    {d} days
                  </option>
                ))}
              </select>
              <FieldError id="token-days-error" message={errors.days} />
            </div>
            <button type="submit" className="btn" disabled={busy}>
              Create token
            </button>
          </Form>
        </section>
      </div>
    </main>
  );
}
