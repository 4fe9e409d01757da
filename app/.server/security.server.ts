/**
 * The security baseline every response gets: headers, CSRF protection by Origin check on
 * every state-changing request, and a request body limit. Runs as the root route middleware.
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
  return (request.headers.get("Authorization")?.startsWith("Bearer ") ?? false) && !carriesSessionCookie(request);
}

/** Whether the request carries Plumbline's session cookie (by name; whether it is valid does not matter here). */
function carriesSessionCookie(request: Request): boolean {
  return (request.headers.get("Cookie") ?? "").split(";").some((part) => part.trim().startsWith(`${sessionCookie.name}=`));
}

function plain(status: number, message: string): Response {
  return new Response(message, { status, headers: { "Content-Type": "text/plain; charset=utf-8" } });
}

export const securityMiddleware: MiddlewareFunction<Response> = async ({ request }, next) => {
  const url = new URL(request.url);
  const path = url.pathname.replace(/\.data$/, "");
  if (!SAFE_METHODS.has(request.method)) {
    if (!CROSS_SITE_POSTS.includes(path) && !sameOrigin(request)) {
      return plain(403, "This form was sent from another site, so Plumbline refused it. Reload the page and try again.");
    }
    const length = Number(request.headers.get("Content-Length") ?? "0");
    if (length > config.MAX_BODY_BYTES && !LARGE_BODY_PREFIXES.some((r) => r.test(path))) {
      const refusal = plain(413, `The request body is ${length} bytes; the limit is ${config.MAX_BODY_BYTES} bytes.`);
      // The unread body is still on the wire: close the connection rather than reuse it.
      refusal.headers.set("Connection", "close");
      return refusal;
    }
  }
  const response = await next();
  const h = response.headers;
  if (!h.has("Content-Security-Policy")) h.set("Content-Security-Policy", "default-src 'none'; frame-ancestors 'none'");
  h.set("X-Content-Type-Options", "nosniff");
  h.set("Referrer-Policy", "same-origin");
  h.set("X-Frame-Options", "DENY");
  h.set("Cross-Origin-Opener-Policy", "same-origin");
  if (servedOverHttps) h.set("Strict-Transport-Security", "max-age=31536000; includeSubDomains");
  return response;
};
