/**
 * The fake sponsor OpenID Connect provider itself: the npm package `oauth2-mock-server`
 * (discovery, JWKS, authorize, token) behind one small HTTP server that adds what the mock
 * leaves out and a real provider does:
 *
 * - a person picker at the authorize step (the mock would issue a code for nobody in
 *   particular); the chosen person's claims (`sub`, `email`, `email_verified`, `name`,
 *   `organisation`) go into the ID token through the mock's `beforeTokenSigning` hook;
 * - registered client: an unknown `client_id` or a `redirect_uri` not registered is refused at
 *   the authorize step, and the token endpoint wants the client secret (HTTP Basic);
 * - authorization codes are good for one exchange only.
 *
 * The signing key (RS256) is kept in the state folder, so tokens stay verifiable across restarts.
 */
import { existsSync, mkdirSync, readFileSync, writeFileSync } from "node:fs";
import http from "node:http";
import path from "node:path";
import { fileURLToPath } from "node:url";
import {
  OAuth2Issuer,
  OAuth2Service,
  type MutableRedirectUri,
  type MutableResponse,
  type MutableToken,
  type TokenRequestIncomingMessage,
} from "oauth2-mock-server";
import { errorPage, oidcPeople, pickerPage, subjectOf, type OidcPerson } from "./picker";

export interface OidcFakeOptions {
  host: string;
  port: number;
  stateDir: string;
  clientId: string;
  clientSecret: string;
  /** Redirect URIs the client registered; empty means any http(s) URI is accepted. */
  redirectUris: string[];
}

const here = path.dirname(fileURLToPath(import.meta.url));

/** Client id and secret from an HTTP Basic header (RFC 6749 section 2.3.1: form-encoded, then base64). */
function basicCredentials(header: string | undefined): { id: string; secret: string } | null {
  const m = /^Basic\s+([A-Za-z0-9+/=]+)$/i.exec(header ?? "");
  if (!m) return null;
  const text = Buffer.from(m[1], "base64").toString("utf8");
  const colon = text.indexOf(":");
  if (colon < 0) return null;
  const decode = (s: string): string => decodeURIComponent(s.replace(/\+/g, " "));
  try {
    return { id: decode(text.slice(0, colon)), secret: decode(text.slice(colon + 1)) };
  } catch {
    return null;
  }
}

async function loadOrMakeKey(issuer: OAuth2Issuer, stateDir: string): Promise<void> {
  const file = path.join(stateDir, "oidc-signing-key.json");
  if (existsSync(file)) {
    await issuer.keys.add(JSON.parse(readFileSync(file, "utf8")) as Record<string, unknown>);
    return;
  }
  const jwk = await issuer.keys.generate("RS256");
  writeFileSync(file, JSON.stringify(jwk), { mode: 0o600 });
}

export async function runOidcFake(
  o: OidcFakeOptions,
): Promise<{ issuerUrl: string; close(): Promise<void> }> {
  mkdirSync(o.stateDir, { recursive: true });
  const people = oidcPeople(path.join(here, "..", "demo-people.json"));
  const issuerUrl = `http://${o.host.includes(":") ? `[${o.host}]` : o.host}:${o.port}`;
  const issuer = new OAuth2Issuer(false);
  issuer.url = issuerUrl;
  await loadOrMakeKey(issuer, o.stateDir);
  const service = new OAuth2Service(issuer);
  /** Codes handed out and not yet exchanged, with the person each was issued for. */
  const codes = new Map<string, OidcPerson>();

  service.on("beforeAuthorizeRedirect", (redirect: MutableRedirectUri, req: http.IncomingMessage) => {
    const query = new URL(req.url ?? "/", issuerUrl).searchParams;
    const person = people.find((p) => p.key === query.get("demo_person"));
    const code = redirect.url.searchParams.get("code");
    if (person && code) codes.set(code, person);
  });

  service.on("beforeTokenSigning", (token: MutableToken, req: TokenRequestIncomingMessage) => {
    const person = req.body.code ? codes.get(req.body.code) : undefined;
    if (!person) return;
    token.payload.sub = subjectOf(person);
    if (token.payload.aud === o.clientId) {
      Object.assign(token.payload, {
        email: person.email,
        email_verified: true,
        name: person.displayName,
        organisation: person.organisation,
      });
    }
  });

  service.on("beforeResponse", (response: MutableResponse, req: TokenRequestIncomingMessage) => {
    if (req.body.grant_type !== "authorization_code") return;
    const credentials = basicCredentials(req.headers.authorization);
    if (!credentials || credentials.id !== o.clientId || credentials.secret !== o.clientSecret) {
      response.statusCode = 401;
      response.body = {
        error: "invalid_client",
        error_description: "Unknown client or wrong client secret.",
      };
      return;
    }
    const code = req.body.code ?? "";
    if (!codes.has(code)) {
      response.statusCode = 400;
      response.body = {
        error: "invalid_grant",
        error_description: "The authorization code is unknown or was already used.",
      };
      return;
    }
    codes.delete(code);
  });

  const handler = service.requestHandler;
  const server = http.createServer((req, res) => {
    const url = new URL(req.url ?? "/", issuerUrl);
    if (req.method === "GET" && url.pathname === "/favicon.ico") {
      res.writeHead(204);
      res.end();
      return;
    }
    if (req.method === "GET" && url.pathname === "/authorize") {
      const q = url.searchParams;
      const refuse = (title: string, message: string): void => {
        res.writeHead(400, { "Content-Type": "text/html; charset=utf-8" });
        res.end(errorPage(title, message));
      };
      if (q.get("client_id") !== o.clientId)
        return refuse("Unknown client", "This provider has no client with that client_id.");
      const redirectUri = q.get("redirect_uri") ?? "";
      if (
        o.redirectUris.length > 0 ? !o.redirectUris.includes(redirectUri) : !/^https?:\/\//.test(redirectUri)
      ) {
        return refuse(
          "Redirect URI not registered",
          `The client did not register ${redirectUri || "an empty redirect URI"}.`,
        );
      }
      if (!q.has("demo_person")) {
        res.writeHead(200, { "Content-Type": "text/html; charset=utf-8", "Cache-Control": "no-store" });
        res.end(pickerPage({ people, query: q, issuer: issuerUrl }));
        return;
      }
      if (!people.some((p) => p.key === q.get("demo_person")))
        return refuse("Unknown person", "Choose a person from the list.");
    }
    handler(req, res);
  });
  await new Promise<void>((resolve, reject) => {
    server.once("error", reject);
    server.listen(o.port, o.host, () => resolve());
  });
  return {
    issuerUrl,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}
