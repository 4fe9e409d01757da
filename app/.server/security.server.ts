/**
 * The security baseline every response gets: headers, CSRF protection by Origin check on
 * every state-changing request, and a request body limit. Runs as the root route middleware.
 * Static files never reach it: server.mjs gives them nosniff.
 */
import type { MiddlewareFunction } from "react-router";
import { config, servedOverHttps } from "./config.server";
import { sessionCookie } from "./session.server";

/** Documents allow only their own scripts carrying this response's nonce; nothing else loads. */
export function contentSecurityPolicy(nonce: string): string {
  return [
    "default-src 'self'",
    `script-src 'self' 'nonce-${nonce}'`,
    // Charts and React set element styles; no inline script is allowed.
    "style-src 'self' 'unsafe-inline'",
    "img-src 'self' data: blob:",
    "font-src 'self'",
    "connect-src 'self'",
    "object-src 'none'",
    "base-uri 'self'",
    // Sign-in forms go to the identity providers (a form's redirects count too): staff SAML, sponsor OpenID Connect.
    `form-action 'self' ${new URL(config.SAML_IDP_SSO_URL).origin} ${new URL(config.OIDC_ISSUER).origin}`,
    "frame-ancestors 'none'",
  ].join("; ");
}

/** Requests that arrive from another site by design and prove themselves by other means. */
const CROSS_SITE_POSTS = ["/auth/saml/acs", "/auth/saml/logout"];

/** Routes that accept bodies above the general limit (they enforce their own). */
const LARGE_BODY_PREFIXES: RegExp[] = [/^\/studies\/[^/]+\/datasets\/upload/];

const SAFE_METHODS = new Set(["GET", "HEAD", "OPTIONS"]);

function sameOrigin(request: Request): boolean {
  const expected = new URL(request.url).origin;
  const allowed = new Set([expected, new URL(config.APP_URL).origin]);
  const origin = request.headers.get("Origin");
  if (origin) return allowed.has(origin);
  // Browsers send Origin on every cross-site POST; fall back to Referer when it is absent.
  const referer = request.headers.get("Referer");
  if (referer) {
    try {
      return allowed.has(new URL(referer).origin);
    } catch {
      return false;
    }
  }
  // Non-browser clients with a bearer token carry no ambient credentials. A request that also
  // carries the session cookie could act through the session, so it is never let through here.
  return (
    (request.headers.get("Authorization")?.startsWith("Bearer ") ?? false) && !carriesSessionCookie(request)
  );
}

/** Whether the request carries Plumbline's session cookie (by name; whether it is valid does not matter here). */
function carriesSessionCookie(request: Request): boolean {
  return (request.headers.get("Cookie") ?? "")
    .split(";")
    .some((part) => part.trim().startsWith(`${sessionCookie.name}=`));
}

function plain(status: number, message: string): Response {
  return new Response(message, { status, headers: { "Content-Type": "text/plain; charset=utf-8" } });
}

function bodyTooLarge(message: string): Response {
  const refusal = plain(413, message);
  // The unread body is still on the wire: close the connection rather than reuse it.
  refusal.headers.set("Connection", "close");
  return refusal;
}

/**
 * The body limit. A declared Content-Length over the limit is refused before reading. A body
 * without one (chunked) is read here, counting bytes, and refused as soon as it passes the
 * limit; one within the limit is handed on from memory (at most the limit, so small).
 */
async function enforceBodyLimit(request: Request, limit: number): Promise<Response | null> {
  const declared = request.headers.get("Content-Length");
  if (declared !== null) {
    // Node's HTTP parser delivers exactly the declared number of bytes, never more.
    const length = Number(declared);
    return length > limit
      ? bodyTooLarge(`The request body is ${length} bytes; the limit is ${limit} bytes.`)
      : null;
  }
  if (!request.body) return null;
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let seen = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    seen += value.byteLength;
    if (seen > limit) {
      // No "Connection: close" here: the server would close at once, with the client's bytes unread.
      void discardRest(reader);
      return plain(413, `The request body is more than ${limit} bytes; the limit is ${limit} bytes.`);
    }
    chunks.push(value);
  }
  replaceBody(request, Buffer.concat(chunks));
  return null;
}

/**
 * After a refusal, reads and drops what the client is still sending for a short while (at most
 * LINGER_MS or LINGER_BYTES), so the 413 reaches a client that reads its answer only once it has
 * sent everything: closing a connection with unread bytes resets it, and the answer is lost.
 * Nothing is kept. A client still sending after that loses its connection.
 */
export const LINGER_MS = 2_000;
const LINGER_BYTES = 64 * 1024 * 1024;

async function discardRest(reader: ReadableStreamDefaultReader<Uint8Array>): Promise<void> {
  const until = Date.now() + LINGER_MS;
  let dropped = 0;
  const timer = setTimeout(() => void reader.cancel().catch(() => undefined), LINGER_MS);
  try {
    while (Date.now() < until && dropped < LINGER_BYTES) {
      const { done, value } = await reader.read();
      if (done) return;
      dropped += value.byteLength;
    }
    await reader.cancel();
  } catch {
    // the client went away: nothing more to drop
  } finally {
    clearTimeout(timer);
  }
}

/**
 * Hands the bytes read by the limit to whoever reads the request next (the route's action, the
 * sign-in endpoints). The middleware cannot pass a new request down, so the one request object
 * answers its body readers from the bytes in memory.
 */
function replaceBody(request: Request, bytes: Uint8Array): void {
  const copy = new Request(request.url, {
    method: request.method,
    headers: request.headers,
    body: bytes as BodyInit,
    signal: request.signal,
  });
  const readers = ["arrayBuffer", "blob", "bytes", "formData", "json", "text", "clone"] as const;
  for (const name of readers) {
    const method = (copy as unknown as Record<string, () => unknown>)[name];
    if (typeof method === "function")
      Object.defineProperty(request, name, { value: method.bind(copy), configurable: true });
  }
  Object.defineProperty(request, "body", { get: () => copy.body, configurable: true });
  Object.defineProperty(request, "bodyUsed", { get: () => copy.bodyUsed, configurable: true });
}

export const securityMiddleware: MiddlewareFunction<Response> = async ({ request }, next) => {
  const url = new URL(request.url);
  const path = url.pathname.replace(/\.data$/, "");
  if (!SAFE_METHODS.has(request.method)) {
    if (!CROSS_SITE_POSTS.includes(path) && !sameOrigin(request)) {
      return plain(
        403,
        "This form was sent from another site, so Plumbline refused it. Reload the page and try again.",
      );
    }
    if (!LARGE_BODY_PREFIXES.some((r) => r.test(path))) {
      const tooLarge = await enforceBodyLimit(request, config.MAX_BODY_BYTES);
      if (tooLarge) return tooLarge;
    }
  }
  const response = await next();
  const h = response.headers;
  if (!h.has("Content-Security-Policy"))
    h.set("Content-Security-Policy", "default-src 'none'; frame-ancestors 'none'");
  h.set("X-Content-Type-Options", "nosniff");
  // Pages are personal and many show subject-level rows (dataset preview, results, figures):
  // no cache keeps any answer unless its route says otherwise (the OpenAPI document).
  if (!h.has("Cache-Control")) h.set("Cache-Control", "private, no-store");
  h.set("Referrer-Policy", "same-origin");
  h.set("X-Frame-Options", "DENY");
  h.set("Cross-Origin-Opener-Policy", "same-origin");
  if (servedOverHttps) h.set("Strict-Transport-Security", "max-age=31536000; includeSubDomains");
  return response;
};
