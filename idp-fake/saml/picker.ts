/**
 * The demo-person picker of the fake identity provider: one button per staff demo person. Each button
 * posts that person's attributes to saml-idp's own sign-in endpoint, the same fields its
 * editable form posts (every field, since saml-idp remembers the previous person's otherwise).
 */
import { readFileSync } from "node:fs";

export interface DemoPerson {
  key: string;
  email: string;
  displayName: string;
  organisation: string;
  groups: string[];
  studyRole: string | null;
  /** Sponsor readers (`oidc`) sign in through the OpenID Connect fake, not here. */
  signIn?: "saml" | "oidc";
}

export function demoPeople(file: string): DemoPerson[] {
  const parsed = JSON.parse(readFileSync(file, "utf8")) as { people: DemoPerson[] };
  return parsed.people.filter((p) => p.signIn !== "oidc");
}

const esc = (s: string): string =>
  s.replace(
    /[&<>"']/g,
    (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c] ?? c,
  );

/** The fields saml-idp's form posts to /signin for one person. */
export function signInFields(p: DemoPerson): Record<string, string> {
  return {
    userName: p.email,
    nameIdFormat: "urn:oasis:names:tc:SAML:1.1:nameid-format:emailAddress",
    email: p.email,
    displayName: p.displayName,
    organisation: p.organisation,
    groups: p.groups.join(","),
  };
}

const ROLE_WORDS: Record<string, string> = {
  data_manager: "Data manager",
  biostatistician: "Biostatistician",
  medical_writer: "Medical writer",
  sponsor_reader: "Sponsor reader",
};

function roleOf(p: DemoPerson): string {
  if (p.groups.includes("plumbline-admins")) return "Administrator";
  return p.studyRole ? (ROLE_WORDS[p.studyRole] ?? p.studyRole) : "No study role";
}

export function pickerPage(o: {
  people: DemoPerson[];
  authnRequest: string | null;
  fullFormUrl: string;
  appOrigin: string;
  issuer: string;
}): string {
  const rows = o.people
    .map((p) => {
      const hidden = Object.entries(signInFields(p))
        .map(([k, v]) => `<input type="hidden" name="${esc(k)}" value="${esc(v)}">`)
        .join("");
      const request = o.authnRequest
        ? `<input type="hidden" name="_authnRequest" value="${esc(o.authnRequest)}">`
        : "";
      return `<li><form method="post" action="/signin" data-person="${esc(p.key)}">${hidden}${request}
<button type="submit" aria-label="Sign in as ${esc(p.displayName)}"><strong>${esc(p.displayName)}</strong>
<span>${esc(roleOf(p))} · ${esc(p.organisation)}</span><span class="mail">${esc(p.email)} · groups: ${esc(p.groups.join(", "))}</span></button></form></li>`;
    })
    .join("\n");
  const body = o.authnRequest
    ? `<ul>${rows}</ul><p class="more"><a href="${esc(o.fullFormUrl)}">Edit the attributes by hand instead</a> (the identity provider's own form).</p>`
    : `<p>No sign-in request came with this visit. Start at <a href="${esc(o.appOrigin)}/sign-in">Plumbline's sign-in page</a>; it sends you back here with one.</p>`;
  return `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>Demo sign-in service</title><style>
body{font-family:system-ui,sans-serif;background:#eef0f3;color:#1f2937;margin:0}
main{max-width:34rem;margin:3rem auto;padding:0 1rem}
h1{font-size:1.25rem;margin:0 0 .25rem}p{line-height:1.45}
.note{font-size:.85rem;color:#4b5563;border-left:3px solid #6b7280;padding-left:.6rem}
ul{list-style:none;padding:0;margin:1rem 0}li{margin:.4rem 0}form{margin:0}
button{display:grid;gap:.1rem;width:100%;text-align:left;padding:.6rem .8rem;background:#fff;border:1px solid #c7ccd4;border-radius:4px;font:inherit;cursor:pointer}
button:hover,button:focus{border-color:#1f2937}button span{font-size:.85rem;color:#4b5563}.mail{font-size:.78rem!important}
.more{font-size:.85rem}
</style></head><body><main>
<h1>Demo sign-in service</h1>
<p class="note">A local stand-in for your organisation's SAML identity provider (${esc(o.issuer)}). There are no passwords: choose who to sign in as. The response is signed exactly as a real provider would sign it.</p>
${body}
</main></body></html>`;
}
