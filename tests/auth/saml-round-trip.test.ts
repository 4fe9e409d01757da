/**
 * A real round trip through the fake identity provider (saml-idp in its own process): our
 * AuthnRequest, its sign-in form (every field posted), its signed response (HTML-escaped on
 * its page), our assertion consumer service, a session; then single logout back through it.
 */
import { createServer } from "node:net";
import path from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { startSamlIdp } from "../../idp-fake/saml/launch";
import { useTempDatabase } from "../support/temp-db";
import { cookiePair } from "./saml-fixtures";

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.once("error", reject);
    s.listen(0, "127.0.0.1", () => {
      const address = s.address();
      const port = typeof address === "object" && address ? address.port : 0;
      s.close(() => resolve(port));
    });
  });
}

const { dir } = useTempDatabase();
const APP = "http://127.0.0.1:5998";
const idp = await startSamlIdp({
  port: await freePort(),
  acsUrl: `${APP}/auth/saml/acs`,
  sloUrl: `${APP}/auth/saml/logout`,
  audience: "urn:plumbline:sp",
  issuer: "urn:plumbline:idp-fake",
  stateDir: path.join(dir, "idp"),
});
Object.assign(process.env, {
  APP_URL: APP,
  SAML_IDP_SSO_URL: idp.ssoUrl,
  SAML_IDP_SLO_URL: idp.sloUrl,
  SAML_IDP_ISSUER: "urn:plumbline:idp-fake",
  SAML_SP_ISSUER: "urn:plumbline:sp",
  SAML_IDP_CERT_FILE: idp.certFile,
});
const { finishSamlSignIn, handleSamlLogout, signInPage, signOut, startSamlSignIn } =
  await import("../../app/.server/auth/sign-in.server");
const { getCurrentUser } = await import("../../app/.server/session.server");
const { listAuditEvents } = await import("../../app/.server/audit.server");

afterAll(async () => {
  await idp.stop();
});

/** The identity provider's cookies, kept like a browser keeps them (its session decides SessionIndex). */
class CookieJar {
  private readonly cookies = new Map<string, string>();
  take(res: Response): void {
    for (const c of res.headers.getSetCookie()) {
      const [pair] = c.split(";");
      const eq = pair.indexOf("=");
      this.cookies.set(pair.slice(0, eq), pair.slice(eq + 1));
    }
  }
  header(): string {
    return [...this.cookies].map(([k, v]) => `${k}=${v}`).join("; ");
  }
}

const decodeEntities = (s: string): string =>
  s
    .replace(/&#x([0-9a-f]+);/gi, (_m, h: string) => String.fromCodePoint(parseInt(h, 16)))
    .replace(/&#(\d+);/g, (_m, d: string) => String.fromCodePoint(Number(d)))
    .replace(/&quot;/g, '"')
    .replace(/&lt;/g, "<")
    .replace(/&gt;/g, ">")
    .replace(/&amp;/g, "&");

/** Name and value of every input and select in one HTML form (the first whose action matches). */
function formFields(html: string, action: string): { action: string; fields: Map<string, string> } {
  const form = new RegExp(
    `<form[^>]*action="(${action.replace(/[/.?]/g, "\\$&")}[^"]*)"[^>]*>([\\s\\S]*?)</form>`,
  ).exec(html);
  if (!form) throw new Error(`no form posting to ${action} in:\n${html.slice(0, 2000)}`);
  const fields = new Map<string, string>();
  for (const m of form[2].matchAll(/<(input|select)\b([^>]*)>/g)) {
    const name = /\bname=["']([^"']+)["']/.exec(m[2])?.[1];
    if (!name) continue;
    const value = /\bvalue=(?:"([^"]*)"|'([^']*)')/.exec(m[2]);
    fields.set(name, decodeEntities(value ? (value[1] ?? value[2]) : ""));
  }
  return { action: decodeEntities(form[1]), fields };
}

const post = (
  url: string,
  fields: Map<string, string> | Record<string, string>,
  jar?: CookieJar,
): Promise<Response> =>
  fetch(url, {
    method: "POST",
    redirect: "manual",
    headers: {
      "Content-Type": "application/x-www-form-urlencoded",
      ...(jar ? { Cookie: jar.header() } : {}),
    },
    body: new URLSearchParams(fields instanceof Map ? [...fields] : Object.entries(fields)).toString(),
  });

/** Our ACS, given the identity provider's auto-posting response page. */
async function deliverToAcs(html: string, cookie: string): Promise<Response> {
  const { action, fields } = formFields(html, `${APP}/auth/saml/acs`);
  expect(action).toBe(`${APP}/auth/saml/acs`);
  expect(fields.get("SAMLResponse")).toMatch(/^[A-Za-z0-9+/]+=*$/);
  return finishSamlSignIn(
    new Request(action, {
      method: "POST",
      headers: { "Content-Type": "application/x-www-form-urlencoded", Cookie: cookie },
      body: new URLSearchParams([...fields]).toString(),
    }),
  );
}

describe("round trip through the fake identity provider", () => {
  it("the sign-in page finds the identity provider answering", async () => {
    const page = await signInPage(new Request(`${APP}/sign-in`));
    expect(page).toMatchObject({ signedIn: false, idp: { answering: true } });
  });

  it("signs in through saml-idp's own form, then signs out through single logout", async () => {
    const jar = new CookieJar();
    const start = await startSamlSignIn(new Request(`${APP}/auth/saml/login?returnTo=/studies`));
    const location = start.headers.get("Location") ?? "";
    expect(location.startsWith(`${idp.ssoUrl}?SAMLRequest=`)).toBe(true);

    // saml-idp's editable form (the picker's "edit by hand" link).
    const formPage = await fetch(`${location}&form=full`, { headers: { Cookie: jar.header() } });
    jar.take(formPage);
    const { fields } = formFields(await formPage.text(), "/signin");
    expect([...fields.keys()]).toEqual(
      expect.arrayContaining([
        "userName",
        "nameIdFormat",
        "email",
        "displayName",
        "organisation",
        "groups",
        "_authnRequest",
      ]),
    );
    const person = {
      userName: "tomas.berg@plumbline.example",
      nameIdFormat: "urn:oasis:names:tc:SAML:1.1:nameid-format:emailAddress",
      email: "tomas.berg@plumbline.example",
      displayName: "Tomas Berg",
      organisation: "Plumbline demo CRO",
      groups: "staff",
    };
    for (const [k, v] of Object.entries(person)) fields.set(k, v);
    const signedIn = await post(`${idp.baseUrl}/signin`, fields, jar);
    jar.take(signedIn);
    expect(signedIn.status).toBe(200);

    const acs = await deliverToAcs(await signedIn.text(), cookiePair(start.headers.get("Set-Cookie")));
    expect(acs.headers.get("Location")).toBe("/studies");
    const appCookie = cookiePair(acs.headers.get("Set-Cookie"));
    const user = await getCurrentUser(new Request(`${APP}/`, { headers: { Cookie: appCookie } }));
    expect(user).toMatchObject({
      email: person.email,
      displayName: "Tomas Berg",
      organisation: "Plumbline demo CRO",
      isAdmin: false,
      nameId: person.email,
    });
    expect(user?.sessionIndex).toMatch(/^\d+$/);

    // Single logout: our LogoutRequest to the identity provider, its signed LogoutResponse back.
    const out = await signOut(
      new Request(`${APP}/sign-out`, { method: "POST", headers: { Cookie: appCookie } }),
    );
    expect(await getCurrentUser(new Request(`${APP}/`, { headers: { Cookie: appCookie } }))).toBeNull();
    const sloLocation = out.headers.get("Location") ?? "";
    expect(sloLocation.startsWith(`${idp.sloUrl}?SAMLRequest=`)).toBe(true);
    const idpAnswer = await fetch(sloLocation, { headers: { Cookie: jar.header() }, redirect: "manual" });
    let back: Request;
    if (idpAnswer.status >= 300 && idpAnswer.status < 400) {
      back = new Request(idpAnswer.headers.get("Location") ?? "");
    } else {
      const { action, fields: logoutFields } = formFields(await idpAnswer.text(), `${APP}/auth/saml/logout`);
      back = new Request(action, {
        method: "POST",
        headers: { "Content-Type": "application/x-www-form-urlencoded" },
        body: new URLSearchParams([...logoutFields]).toString(),
      });
    }
    const done = await handleSamlLogout(back);
    expect(done.headers.get("Location")).toBe("/sign-in?signedOut=idp");
  });

  it("signs in an administrator with one click on the demo-person picker", async () => {
    const jar = new CookieJar();
    const start = await startSamlSignIn(new Request(`${APP}/auth/saml/login?returnTo=/`));
    const picker = await fetch(start.headers.get("Location") ?? "");
    jar.take(picker);
    const html = await picker.text();
    expect(html).toContain('aria-label="Sign in as Morgan Reyes"');
    const adminForm =
      /<form method="post" action="\/signin" data-person="admin">([\s\S]*?)<\/form>/.exec(html)?.[0] ?? "";
    const { fields } = formFields(adminForm, "/signin");
    expect(fields.get("groups")).toContain("plumbline-admins");
    const signedIn = await post(`${idp.baseUrl}/signin`, fields, jar);
    const acs = await deliverToAcs(await signedIn.text(), cookiePair(start.headers.get("Set-Cookie")));
    expect(acs.headers.get("Location")).toBe("/");
    const user = await getCurrentUser(
      new Request(`${APP}/`, { headers: { Cookie: cookiePair(acs.headers.get("Set-Cookie")) } }),
    );
    expect(user).toMatchObject({
      email: "morgan.reyes@plumbline.example",
      displayName: "Morgan Reyes",
      isAdmin: true,
    });
  });

  /** Login through the picker as the person with this key; `cookie` is what the browser holds for the app. */
  async function pickerSignIn(
    personKey: string,
    opts: { fresh?: boolean; appCookie?: string; returnTo?: string } = {},
  ): Promise<{ acs: Response; bound: string }> {
    const returnTo = opts.returnTo ?? "/";
    const start = await startSamlSignIn(
      new Request(
        `${APP}/auth/saml/login?returnTo=${encodeURIComponent(returnTo)}${opts.fresh ? "&fresh=1" : ""}`,
        { headers: opts.appCookie ? { Cookie: opts.appCookie } : {} },
      ),
    );
    const bound = cookiePair(start.headers.get("Set-Cookie"));
    expect(bound).toMatch(/^plumbline_saml_request=/);
    const picker = await fetch(start.headers.get("Location") ?? "");
    const html = await picker.text();
    const form =
      new RegExp(`<form method="post" action="/signin" data-person="${personKey}">([\\s\\S]*?)</form>`).exec(
        html,
      )?.[0] ?? "";
    const { fields } = formFields(form, "/signin");
    const signedIn = await post(`${idp.baseUrl}/signin`, fields);
    return {
      acs: await deliverToAcs(await signedIn.text(), [opts.appCookie, bound].filter(Boolean).join("; ")),
      bound,
    };
  }

  it("a response delivered to a browser that did not start its sign-in is refused (login CSRF)", async () => {
    const start = await startSamlSignIn(new Request(`${APP}/auth/saml/login?returnTo=/`));
    const picker = await (await fetch(start.headers.get("Location") ?? "")).text();
    const form =
      /<form method="post" action="\/signin" data-person="data-manager">([\s\S]*?)<\/form>/.exec(
        picker,
      )?.[0] ?? "";
    const signedIn = await post(`${idp.baseUrl}/signin`, formFields(form, "/signin").fields);
    // The attacker's own response, posted from the victim's browser: no binding cookie there.
    const html = await signedIn.text();
    const acs = await deliverToAcs(html, "");
    expect(acs.headers.get("Location")).toBe("/sign-in?error=not-this-browser");
    expect(acs.headers.getSetCookie().some((c) => c.startsWith("plumbline_session="))).toBe(false);
    // Another request's binding does not fit either.
    const other = await startSamlSignIn(new Request(`${APP}/auth/saml/login?returnTo=/`));
    const again = await deliverToAcs(html, cookiePair(other.headers.get("Set-Cookie")));
    expect(again.headers.get("Location")).toMatch(/^\/sign-in\?error=(not-this-browser|replayed)$/);
  });

  it("a fresh sign-in before signing must be the same person: another person is refused and audited, the session stays", async () => {
    const { acs } = await pickerSignIn("second-biostatistician");
    const tomasCookie = cookiePair(acs.headers.get("Set-Cookie"));
    const before = await getCurrentUser(new Request(`${APP}/`, { headers: { Cookie: tomasCookie } }));
    expect(before?.email).toBe("tomas.berg@plumbline.example");

    const back = "/studies/s1/reruns/r1#sign-off";
    const refused = await pickerSignIn("biostatistician", {
      fresh: true,
      appCookie: tomasCookie,
      returnTo: back,
    });
    expect(refused.acs.headers.get("Location")).toBe(
      "/studies/s1/reruns/r1?reauth=different-person#sign-off",
    );
    expect(refused.acs.headers.getSetCookie().some((c) => c.startsWith("plumbline_session="))).toBe(false);
    const after = await getCurrentUser(new Request(`${APP}/`, { headers: { Cookie: tomasCookie } }));
    expect(after).toMatchObject({
      id: before?.id,
      email: "tomas.berg@plumbline.example",
      sessionId: before?.sessionId,
      signedInAt: before?.signedInAt,
    });
    const [event] = await listAuditEvents({ action: "auth.reauth_refused", limit: 1 });
    expect(event).toMatchObject({ actorId: before?.id, entityId: before?.id });
    expect(event.detail).toMatch(/priya\.lindqvist@plumbline\.example, not the person signed in/);

    await new Promise((r) => setTimeout(r, 5));
    const confirmed = await pickerSignIn("second-biostatistician", {
      fresh: true,
      appCookie: tomasCookie,
      returnTo: back,
    });
    expect(confirmed.acs.headers.get("Location")).toBe("/studies/s1/reruns/r1?reauth=done#sign-off");
    const fresh = await getCurrentUser(new Request(`${APP}/`, { headers: { Cookie: tomasCookie } }));
    expect(fresh).toMatchObject({ id: before?.id, sessionId: before?.sessionId });
    expect(Date.parse(fresh?.signedInAt ?? "")).toBeGreaterThan(Date.parse(before?.signedInAt ?? ""));
  });
});
