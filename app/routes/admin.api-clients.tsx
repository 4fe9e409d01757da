import { data, useNavigation } from "react-router";
import { z } from "zod";
import { TokenTable } from "~/components/token-table";
import type { Route } from "./+types/admin.api-clients";
import { PageHeader } from "~/components/page";
import { allTokens, revokeToken, statusOf } from "~/.server/api/tokens.server";
import { REQUESTS_PER_MINUTE } from "~/.server/api/rate-limit.server";
import { actorOf } from "~/.server/people.server";
import { requireAdmin } from "~/.server/permissions.server";

export function meta() {
  return [{ title: "API clients · Plumbline" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  await requireAdmin(request, "apiClients.manage");
  const now = Date.now();
  const tokens = await allTokens();
  return {
    perMinute: REQUESTS_PER_MINUTE,
    tokens: tokens.map((k) => ({
      id: k.id,
      owner: k.ownerName,
      ownerEmail: k.ownerEmail,
      name: k.name,
      prefix: k.prefix,
      createdAt: k.createdAt,
      expiresAt: k.expiresAt,
      lastUsedAt: k.lastUsedAt,
      status: statusOf(k, now),
    })),
  };
}

const Revoke = z.object({ tokenId: z.string().min(1) });

export async function action({ request }: Route.ActionArgs) {
  const admin = await requireAdmin(request, "apiClients.manage");
  const parsed = Revoke.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data({ ok: false, message: "Choose a token to revoke." }, { status: 400 });
  const r = await revokeToken(actorOf(admin), parsed.data.tokenId, "administrator");
  return r.ok
    ? { ok: true, message: "Token revoked." }
    : data({ ok: false, message: r.message }, { status: 404 });
}

export default function ApiClients({ loaderData, actionData }: Route.ComponentProps) {
  const { tokens, perMinute } = loaderData;
  const busy = useNavigation().state === "submitting";
  const active = tokens.filter((k) => k.status === "active").length;
  return (
    <main>
      <PageHeader eyebrow="Administration" title="API clients" />
      <p className="mb-4 max-w-prose text-sm text-ink-soft">
        Every API token people have created on their profile page. A token acts with its owner's study roles,
        never more, and may make {perMinute} requests a minute. Revoke a token that should no longer be used;
        its owner can create a new one.
      </p>
      {actionData ? (
        <p
          className={`mb-3 text-sm font-medium ${actionData.ok ? "text-within" : "text-finding"}`}
          role={actionData.ok ? "status" : "alert"}
        >
          {actionData.message}
        </p>
      ) : null}
      <p className="mb-2 text-sm">
        {active} active of {tokens.length} token{tokens.length === 1 ? "" : "s"}
      </p>
      <div className="overflow-x-auto">
        <TokenTable tokens={tokens} busy={busy} withOwner empty="Nobody has created an API token yet." />
      </div>
    </main>
  );
}
