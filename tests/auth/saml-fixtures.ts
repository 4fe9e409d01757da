/**
 * Test fixtures for the SAML service provider: throwaway key pairs (the trusted identity
 * provider's and a stranger's) and signed SAML responses built with `samlp`, the library the
 * fake identity provider itself signs with, so test responses have the real shape.
 */
import { execFileSync } from "node:child_process";
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import path from "node:path";
import { inflateRawSync } from "node:zlib";

const require = createRequire(import.meta.url);

interface SamlpConfig {
  issuer: string;
  cert: string;
  key: string;
  audience: string;
  recipient: string;
  destination: string;
  inResponseTo?: string;
  lifetimeInSeconds: number;
  signResponse: boolean;
  signatureAlgorithm: string;
  digestAlgorithm: string;
  sessionIndex?: string;
  includeAttributeNameFormat: boolean;
  profileMapper: (user: TestUser) => {
    getClaims(): Record<string, string | string[]>;
    getNameIdentifier(): { nameIdentifier: string; nameIdentifierFormat: string };
  };
}
const samlp = require("samlp") as {
  getSamlResponse(config: SamlpConfig, user: TestUser, cb: (err: Error | null, xml?: string) => void): void;
};

export interface KeyPair {
  certFile: string;
  keyFile: string;
  cert: string;
  key: string;
}

export function makeKeyPair(dir: string, name: string): KeyPair {
  const certFile = path.join(dir, `${name}-cert.pem`);
  const keyFile = path.join(dir, `${name}-key.pem`);
  execFileSync(
    "openssl",
    [
      "req",
      "-x509",
      "-newkey",
      "rsa:2048",
      "-nodes",
      "-subj",
      `/CN=${name}`,
      "-keyout",
      keyFile,
      "-out",
      certFile,
      "-days",
      "30",
    ],
    {
      stdio: "ignore",
    },
  );
  return { certFile, keyFile, cert: readFileSync(certFile, "utf8"), key: readFileSync(keyFile, "utf8") };
}

export interface TestUser {
  email: string;
  displayName: string;
  organisation: string;
  groups: string[];
}

export interface ResponseOptions {
  signer: KeyPair;
  issuer: string;
  audience: string;
  acsUrl: string;
  inResponseTo?: string;
  user: TestUser;
  lifetimeInSeconds?: number;
}

/** A SAML response signed (response and assertion) by `signer`, base64 as an IdP posts it. */
export function signedResponse(o: ResponseOptions): Promise<string> {
  const config: SamlpConfig = {
    issuer: o.issuer,
    cert: o.signer.cert,
    key: o.signer.key,
    audience: o.audience,
    recipient: o.acsUrl,
    destination: o.acsUrl,
    inResponseTo: o.inResponseTo,
    lifetimeInSeconds: o.lifetimeInSeconds ?? 300,
    signResponse: true,
    signatureAlgorithm: "rsa-sha256",
    digestAlgorithm: "sha256",
    sessionIndex: "4242",
    includeAttributeNameFormat: true,
    profileMapper: (user) => ({
      getClaims: () => ({
        email: user.email,
        displayName: user.displayName,
        organisation: user.organisation,
        groups: user.groups,
      }),
      getNameIdentifier: () => ({
        nameIdentifier: user.email,
        nameIdentifierFormat: "urn:oasis:names:tc:SAML:1.1:nameid-format:emailAddress",
      }),
    }),
  };
  return new Promise((resolve, reject) =>
    samlp.getSamlResponse(config, o.user, (err, xml) =>
      err || !xml ? reject(err ?? new Error("no response")) : resolve(Buffer.from(xml).toString("base64")),
    ),
  );
}

/** The ID of the AuthnRequest carried (deflated, base64) in a redirect to the identity provider. */
export function authnRequestId(location: string): string {
  const samlRequest = new URL(location).searchParams.get("SAMLRequest");
  if (!samlRequest) throw new Error(`no SAMLRequest in ${location}`);
  const xml = inflateRawSync(Buffer.from(samlRequest, "base64")).toString("utf8");
  const id = /\sID="([^"]+)"/.exec(xml)?.[1];
  if (!id) throw new Error("no ID in the AuthnRequest");
  return id;
}

/** A form post to the assertion consumer service, as the browser sends it. */
export function acsPost(appUrl: string, samlResponse: string, relayState = "/", cookie?: string): Request {
  const headers: Record<string, string> = { "Content-Type": "application/x-www-form-urlencoded" };
  if (cookie) headers.Cookie = cookie;
  return new Request(`${appUrl}/auth/saml/acs`, {
    method: "POST",
    headers,
    body: new URLSearchParams({ SAMLResponse: samlResponse, RelayState: relayState }).toString(),
  });
}

/** The cookie pair (name=value) from a Set-Cookie header value. */
export const cookiePair = (setCookie: string | null): string => (setCookie ?? "").split(";")[0];
