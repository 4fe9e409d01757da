/**
 * Single logout started by the identity provider: a signed logout request ends the Plumbline
 * sessions of that identity-provider session and is answered; an unsigned one ends nothing.
 */
import { SAML } from "@node-saml/node-saml";
import { describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import { acsPost, authnRequestId, cookiePair, makeKeyPair, signedResponse } from "./saml-fixtures";

const { dir } = useTempDatabase();
const trusted = makeKeyPair(dir, "trusted-idp");
const APP = "http://127.0.0.1:5997";
Object.assign(process.env, {
  APP_URL: APP,
  SAML_IDP_SSO_URL: "http://127.0.0.1:9/saml/sso",
  SAML_IDP_SLO_URL: "http://127.0.0.1:9/saml/slo",
  SAML_IDP_ISSUER: "urn:plumbline:idp-fake",
  SAML_SP_ISSUER: "urn:plumbline:sp",
  SAML_IDP_CERT_FILE: trusted.certFile,
});
const { bindRequest, finishSamlSignIn, handleSamlLogout } =
  await import("../../app/.server/auth/sign-in.server");
const { samlSetup } = await import("../../app/.server/auth/saml-setup.server");
const { getCurrentUser } = await import("../../app/.server/session.server");
const { listAuditEvents } = await import("../../app/.server/audit.server");

const dana = {
  email: "dana.okafor@plumbline.example",
  displayName: "Dana Okafor",
  organisation: "Plumbline demo CRO",
  groups: ["staff"],
};

async function signedInCookie(): Promise<string> {
  const inResponseTo = authnRequestId(
    await samlSetup().signIn.getAuthorizeUrlAsync("/", "127.0.0.1:5997", {}),
  );
  const response = await signedResponse({
    signer: trusted,
    issuer: "urn:plumbline:idp-fake",
    audience: "urn:plumbline:sp",
    acsUrl: `${APP}/auth/saml/acs`,
    inResponseTo,
    user: dana,
  });
  const bound = cookiePair(await bindRequest({ id: inResponseTo, reauth: null }));
  return cookiePair((await finishSamlSignIn(acsPost(APP, response, "/", bound))).headers.get("Set-Cookie"));
}

/** The identity provider's side: a logout request in the redirect binding, signed when given the key. */
function idpLogoutUrl(sign: boolean): Promise<string> {
  const idp = new SAML({
    idpCert: trusted.cert,
    issuer: "urn:plumbline:idp-fake",
    callbackUrl: `${APP}/unused`,
    entryPoint: `${APP}/auth/saml/logout`,
    logoutUrl: `${APP}/auth/saml/logout`,
    ...(sign ? { privateKey: trusted.key, signatureAlgorithm: "sha256" as const } : {}),
  });
  return idp.getLogoutUrlAsync(
    {
      issuer: "urn:plumbline:idp-fake",
      nameID: dana.email,
      nameIDFormat: "urn:oasis:names:tc:SAML:1.1:nameid-format:emailAddress",
      sessionIndex: "4242",
    },
    "",
    {},
  );
}

const isSignedIn = async (cookie: string): Promise<boolean> =>
  (await getCurrentUser(new Request(`${APP}/`, { headers: { Cookie: cookie } }))) !== null;

describe("logout started by the identity provider", () => {
  it("an unsigned logout request ends nothing", async () => {
    const cookie = await signedInCookie();
    const url = await idpLogoutUrl(false);
    expect(new URL(url).searchParams.has("Signature")).toBe(false);
    const response = await handleSamlLogout(new Request(url));
    expect(response.headers.get("Location")).toBe("/sign-in?signedOut=partial");
    expect(await isSignedIn(cookie)).toBe(true);
  });

  it("a signed logout request ends the matching sessions and is answered", async () => {
    const cookie = await signedInCookie();
    const url = await idpLogoutUrl(true);
    expect(new URL(url).searchParams.has("Signature")).toBe(true);
    const response = await handleSamlLogout(new Request(url));
    expect(response.headers.get("Location")).toMatch(/^http:\/\/127\.0\.0\.1:9\/saml\/slo\?SAMLResponse=/);
    expect(await isSignedIn(cookie)).toBe(false);
    const [event] = await listAuditEvents({ action: "auth.sign_out", limit: 1 });
    expect(event.detail).toMatch(/started by the identity provider/);
  });
});
