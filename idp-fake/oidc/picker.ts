/**
 * The sponsor-person picker of the fake OpenID Connect provider: the mock server issues codes
 * without asking who is signing in, so its authorize step first shows one button per sponsor
 * demo person. Each button repeats the authorization request with `demo_person` added.
 */
import { readFileSync } from "node:fs";

export interface OidcPerson {
  key: string;
  email: string;
  displayName: string;
  organisation: string;
  /** `oidc` for sponsor readers; staff sign in through the SAML fake. */
  signIn?: "saml" | "oidc";
}

/** The sponsor people of demo-people.json (those who sign in through OpenID Connect). */
export function oidcPeople(file: string): OidcPerson[] {
  const parsed = JSON.parse(readFileSync(file, "utf8")) as { people: OidcPerson[] };
  return parsed.people.filter((p) => p.signIn === "oidc");
}

/** The stable subject the fake gives a person (an opaque id, as real providers do). */
export const subjectOf = (p: OidcPerson): string => `sponsor-${p.key}`;

const esc = (s: string): string =>
  s.replace(
    /[&<>"']/g,
    (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c] ?? c,
  );

export function pickerPage(o: { people: OidcPerson[]; query: URLSearchParams; issuer: string }): string {
  const hidden = [...o.query]
    .filter(([k]) => k !== "demo_person")
    .map(([k, v]) => `<input type="hidden" name="${esc(k)}" value="${esc(v)}">`)
    .join("");
  const rows = o.people
    .map(
      (
        p,
      ) => `<li><form method="get" action="/authorize" data-person="${esc(p.key)}">${hidden}<input type="hidden" name="demo_person" value="${esc(p.key)}">
<button type="submit" aria-label="Continue as ${esc(p.displayName)}"><strong>${esc(p.displayName)}</strong>
<span>Sponsor reader · ${esc(p.organisation)}</span><span class="mail">${esc(p.email)}</span></button></form></li>`,
    )
    .join("\n");
  return `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>Demo sponsor sign-in</title><style>
body{font-family:system-ui,sans-serif;background:#edf1ee;color:#1c2b24;margin:0}
main{max-width:34rem;margin:3rem auto;padding:0 1rem}
h1{font-size:1.25rem;margin:0 0 .25rem}p{line-height:1.45}
.note{font-size:.85rem;color:#3f5148;border-left:3px solid #5f7a6c;padding-left:.6rem}
ul{list-style:none;padding:0;margin:1rem 0}li{margin:.4rem 0}form{margin:0}
button{display:grid;gap:.1rem;width:100%;text-align:left;padding:.6rem .8rem;background:#fff;border:1px solid #c3cfc8;border-radius:4px;font:inherit;cursor:pointer}
button:hover,button:focus{border-color:#1c2b24}button span{font-size:.85rem;color:#3f5148}.mail{font-size:.78rem!important}
</style></head><body><main>
<h1>Demo sponsor sign-in</h1>
<p class="note">A local stand-in for a sponsor organisation's OpenID Connect provider (${esc(o.issuer)}). There are no passwords: choose who signs in. The ID token is signed exactly as a real provider would sign it.</p>
<ul>${rows}</ul>
</main></body></html>`;
}

export function errorPage(title: string, message: string): string {
  return `<!doctype html><html lang="en"><head><meta charset="utf-8"><title>${esc(title)}</title></head><body style="font-family:system-ui,sans-serif;max-width:34rem;margin:3rem auto"><h1 style="font-size:1.25rem">${esc(title)}</h1><p>${esc(message)}</p></body></html>`;
}
