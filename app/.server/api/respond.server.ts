/**
 * How every /api/v1 route answers: JSON only, the caution in a top-level field of every
 * answer, errors as `{ error: { code, message } }` with a stable code.
 *
 * Only a bearer token authenticates an API request. Session cookies are ignored here, so a
 * page on another site cannot make a signed-in browser call the API (no CSRF by design).
 */
import { CAUTION } from "~/shared/caution";
import {
  apiRateLimit,
  FAILED_ATTEMPTS_PER_MINUTE,
  failedTokenAttempts,
  type RateDecision,
} from "./rate-limit.server";
import { tokenPrefixOf, verifyToken, type ApiPrincipal } from "./tokens.server";

export const API_ERROR_CODES = [
  "unauthorized",
  "forbidden",
  "not_found",
  "rate_limited",
  "bad_request",
  "method_not_allowed",
  "internal_error",
] as const;
export type ApiErrorCode = (typeof API_ERROR_CODES)[number];

const STATUS_OF: Record<ApiErrorCode, number> = {
  unauthorized: 401,
  forbidden: 403,
  not_found: 404,
  rate_limited: 429,
  bad_request: 400,
  method_not_allowed: 405,
  internal_error: 500,
};

export class ApiError extends Error {
  constructor(
    readonly code: ApiErrorCode,
    message: string,
    readonly headers: Record<string, string> = {},
  ) {
    super(message);
  }
  get status(): number {
    return STATUS_OF[this.code];
  }
}

function json(status: number, body: object, headers: Record<string, string> = {}): Response {
  return new Response(JSON.stringify({ caution: CAUTION, ...body }), {
    status,
    headers: { "Content-Type": "application/json; charset=utf-8", "Cache-Control": "no-store", ...headers },
  });
}

export function errorResponse(e: ApiError): Response {
  return json(e.status, { error: { code: e.code, message: e.message } }, e.headers);
}

/** What the app's services throw for refusals (`data({ message }, { status })`). */
function thrownStatus(e: unknown): { status: number; message: string | null } | null {
  if (e instanceof Response) return { status: e.status, message: null };
  if (e && typeof e === "object" && (e as { type?: unknown }).type === "DataWithResponseInit") {
    const { data, init } = e as { data: unknown; init: { status?: number } | null };
    const message =
      data && typeof data === "object" && "message" in data
        ? String((data as { message: unknown }).message)
        : null;
    return { status: init?.status ?? 200, message };
  }
  return null;
}

/** Turns anything a handler threw into the API's error shape. */
export function toApiError(e: unknown): ApiError {
  if (e instanceof ApiError) return e;
  const thrown = thrownStatus(e);
  if (thrown?.status === 403)
    return new ApiError("forbidden", thrown.message ?? "Your role on this study does not allow this.");
  if (thrown?.status === 404)
    return new ApiError("not_found", thrown.message ?? "There is nothing at this address.");
  if (thrown?.status === 400)
    return new ApiError("bad_request", thrown.message ?? "The request is not valid.");
  console.error("API request failed:", e);
  return new ApiError(
    "internal_error",
    "Plumbline could not answer this request. Try again; if it keeps failing, tell your Plumbline administrator the time it happened.",
  );
}

const BEARER = /^Bearer\s+(\S+)\s*$/i;

/** The principal a request's bearer token acts for, or an `unauthorized` ApiError. */
export async function authenticate(request: Request): Promise<ApiPrincipal> {
  const challenge = { "WWW-Authenticate": 'Bearer realm="plumbline"' };
  const header = request.headers.get("Authorization");
  const match = header ? BEARER.exec(header) : null;
  if (!match) {
    const cookieNote = request.headers.has("Cookie")
      ? " A browser session does not authenticate API requests."
      : "";
    throw new ApiError(
      "unauthorized",
      `Send an API token in the Authorization header ("Authorization: Bearer plb_…"); create one on your Plumbline profile page.${cookieNote}`,
      challenge,
    );
  }
  const prefix = `prefix:${tokenPrefixOf(match[1])}`;
  const tooMany = (retryAfter: number): ApiError =>
    new ApiError(
      "rate_limited",
      `Too many requests with a wrong API token (at most ${FAILED_ATTEMPTS_PER_MINUTE} a minute); wait ${retryAfter} s, then check that the token was copied whole or create a new one on your profile page.`,
      { "Retry-After": String(retryAfter) },
    );
  const blocked = failedTokenAttempts.byPrefix.peek(prefix);
  if (!blocked.allowed) throw tooMany(blocked.retryAfter);
  const check = await verifyToken(match[1]);
  if (!check.ok) {
    const byPrefix = failedTokenAttempts.byPrefix.take(prefix);
    const all = failedTokenAttempts.all.take("all");
    if (!byPrefix.allowed || !all.allowed) throw tooMany(Math.max(byPrefix.retryAfter, all.retryAfter));
    throw new ApiError("unauthorized", check.message, {
      ...challenge,
      "WWW-Authenticate": 'Bearer realm="plumbline", error="invalid_token"',
    });
  }
  return check.principal;
}

function rateHeaders(d: RateDecision): Record<string, string> {
  return { "X-RateLimit-Limit": String(d.limit), "X-RateLimit-Remaining": String(d.remaining) };
}

/**
 * Answers an API GET: authenticates the bearer token, applies its rate limit, runs the
 * handler with the token's principal and returns its body as JSON with the caution.
 */
export async function apiAnswer(
  request: Request,
  handler: (principal: ApiPrincipal) => Promise<object>,
): Promise<Response> {
  let rate: RateDecision | null = null;
  try {
    const principal = await authenticate(request);
    rate = apiRateLimit.take(principal.tokenId);
    if (!rate.allowed) {
      throw new ApiError(
        "rate_limited",
        `This token may make ${rate.limit} requests a minute; wait ${rate.retryAfter} s and try again.`,
        {
          "Retry-After": String(rate.retryAfter),
        },
      );
    }
    return json(200, await handler(principal), rateHeaders(rate));
  } catch (e) {
    const err = toApiError(e);
    const res = errorResponse(err);
    if (rate) for (const [k, v] of Object.entries(rateHeaders(rate))) res.headers.set(k, v);
    return res;
  }
}

/** Like apiAnswer, for handlers that return a file (the appendix): errors stay JSON. */
export async function apiFile(
  request: Request,
  handler: (principal: ApiPrincipal) => Promise<Response>,
): Promise<Response> {
  try {
    const principal = await authenticate(request);
    const rate = apiRateLimit.take(principal.tokenId);
    if (!rate.allowed) {
      throw new ApiError(
        "rate_limited",
        `This token may make ${rate.limit} requests a minute; wait ${rate.retryAfter} s and try again.`,
        {
          "Retry-After": String(rate.retryAfter),
        },
      );
    }
    const res = await handler(principal);
    for (const [k, v] of Object.entries(rateHeaders(rate))) res.headers.set(k, v);
    return res;
  } catch (e) {
    return errorResponse(toApiError(e));
  }
}

/** The API is read-only: every other method gets a JSON 405. */
export function methodNotAllowed(request: Request): Response {
  return errorResponse(
    new ApiError(
      "method_not_allowed",
      `The Plumbline API is read-only: ${request.method} is not allowed here; use GET.`,
      { Allow: "GET, HEAD" },
    ),
  );
}

/** Unknown paths under /api/v1 answer JSON, not the HTML not-found page. */
export function notFound(request: Request): Response {
  const path = new URL(request.url).pathname;
  return errorResponse(
    new ApiError(
      "not_found",
      `There is no API endpoint at ${path}. The endpoints are listed in /api/v1/openapi.json.`,
    ),
  );
}
