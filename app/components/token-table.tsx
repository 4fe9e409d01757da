import { Form } from "react-router";
import { utc } from "~/shared/format";

export interface TokenRow {
  id: string;
  name: string;
  prefix: string;
  createdAt: string;
  expiresAt: string;
  lastUsedAt: string | null;
  status: "active" | "expired" | "revoked";
  owner?: string;
  ownerEmail?: string;
}

const STATUS_WORD = { active: "Active", expired: "Expired", revoked: "Revoked" } as const;

/**
 * API tokens with a revoke button on each active one: a person's own (profile page) or, with
 * the owner column, everybody's (administrators' API clients page). The revoke form posts
 * `tokenId`, plus `intent` when given.
 */
export function TokenTable({
  tokens,
  busy,
  withOwner = false,
  revokeIntent,
  empty,
}: {
  tokens: readonly TokenRow[];
  busy: boolean;
  withOwner?: boolean;
  revokeIntent?: string;
  empty: string;
}) {
  return (
    <table className="data-table panel">
      <thead>
        <tr>
          {withOwner ? <th scope="col">Owner</th> : null}
          <th scope="col">Name</th>
          <th scope="col">Starts with</th>
          <th scope="col">Created</th>
          <th scope="col">Expires</th>
          <th scope="col">Last used</th>
          <th scope="col">Status</th>
          <th scope="col">
            <span className="sr-only">Revoke</span>
          </th>
        </tr>
      </thead>
      <tbody>
        {tokens.map((k) => (
          <tr key={k.id}>
            {withOwner ? (
              <td>
                <div className="font-medium">{k.owner}</div>
                <div className="text-xs text-ink-soft">{k.ownerEmail}</div>
              </td>
            ) : null}
            <th scope="row" className={withOwner ? undefined : "font-medium"}>
              {k.name}
            </th>
            <td className="font-mono text-xs">{k.prefix}…</td>
            <td className="num whitespace-nowrap">{utc(k.createdAt)}</td>
            <td className="num whitespace-nowrap">{utc(k.expiresAt)}</td>
            <td className="num whitespace-nowrap">{k.lastUsedAt ? utc(k.lastUsedAt) : "never"}</td>
            <td>{STATUS_WORD[k.status]}</td>
            <td>
              {k.status === "active" ? (
                <Form method="post">
                  {revokeIntent ? <input type="hidden" name="intent" value={revokeIntent} /> : null}
                  <input type="hidden" name="tokenId" value={k.id} />
                  <button
                    type="submit"
                    className="btn-quiet py-1"
                    disabled={busy}
                    aria-label={withOwner ? `Revoke ${k.owner}'s token ${k.name}` : `Revoke token ${k.name}`}
                  >
                    Revoke
                  </button>
                </Form>
              ) : null}
            </td>
          </tr>
        ))}
        {tokens.length === 0 ? (
          <tr>
            <td colSpan={withOwner ? 8 : 7} className="text-ink-soft">
              {empty}
            </td>
          </tr>
        ) : null}
      </tbody>
    </table>
  );
}
