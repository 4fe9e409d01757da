/**
 * Sessions: a signed, httpOnly, SameSite=Lax cookie carries only a random session id; the
 * session itself lives in the database so that signing out ends it everywhere and every app
 * instance sharing the database sees the same sessions. A new id is issued at every sign-in
 * (rotation). Sessions end after 30 minutes without a request or 12 hours after sign-in.
 */
import { randomBytes } from "node:crypto";
import { and, eq, gt, lt, sql } from "drizzle-orm";
import { LRUCache } from "lru-cache";
import { createCookie, redirect } from "react-router";
import { config, servedOverHttps } from "./config.server";
import { db, isoNow, t, writeTransaction } from "./db/index.server";
import { forgetRequestReads, oncePerRequest } from "./request-reads.server";

export const IDLE_TIMEOUT_MS = 30 * 60 * 1000;
export const ABSOLUTE_TIMEOUT_MS = 12 * 60 * 60 * 1000;
/** How stale `lastSeenAt` may get before a request refreshes it (saves a write per request). */
const TOUCH_AFTER_MS = 60 * 1000;

export const sessionCookie = createCookie("plumbline_session", {
  httpOnly: true,
  sameSite: "lax",
  secure: servedOverHttps,
  path: "/",
  secrets: [config.SESSION_SECRET],
});

interface SessionData {
  signedInAt: string;
  /** SAML NameID and SessionIndex, for single logout at the identity provider. */
  nameId?: string;
  sessionIndex?: string;
}

export interface CurrentUser {
  id: string;
  email: string;
  displayName: string;
  organisation: string | null;
  isAdmin: boolean;
  identitySource: "saml" | "oidc";
  sessionId: string;
  /** When this person last authenticated at their identity provider. */
  signedInAt: string;
  nameId?: string;
  sessionIndex?: string;
}

/**
 * Cookie headers whose session cookie has been verified, with the id it carries. Verifying the
 * signature goes through Web Crypto (a key import and an HMAC check, each a round trip through
 * the thread pool that puts the request at the back of the event loop's queue); a browser sends
 * the same header on every request of its session. Only headers that verified are kept, so a
 * forged or altered cookie is always checked in full; the session itself is read from the
 * database on every request as before (signing out anywhere still ends it at once).
 */
const verifiedCookieHeaders = new LRUCache<string, string>({ max: 2_000 });
const MAX_REMEMBERED_HEADER = 4_096;

async function readSessionId(request: Request): Promise<string | null> {
  const header = request.headers.get("Cookie");
  const known = header ? verifiedCookieHeaders.get(header) : undefined;
  if (known) return known;
  const value: unknown = await sessionCookie.parse(header);
  if (typeof value !== "string" || value.length === 0) return null;
  if (header && header.length <= MAX_REMEMBERED_HEADER) verifiedCookieHeaders.set(header, value);
  return value;
}

/**
 * Starts a fresh session for a person who has just authenticated, ending any session the
 * browser already had. Returns the Set-Cookie header value.
 */
export async function startSession(
  request: Request,
  personId: string,
  saml?: { nameId?: string; sessionIndex?: string },
): Promise<string> {
  forgetRequestReads(request);
  const previous = await readSessionId(request);
  const id = randomBytes(32).toString("base64url");
  const at = new Date();
  const data: SessionData = { signedInAt: at.toISOString(), ...saml };
  await writeTransaction(async (tx) => {
    if (previous) await tx.delete(t.sessions).where(eq(t.sessions.id, previous));
    await tx.insert(t.sessions).values({
      id,
      personId,
      dataJson: JSON.stringify(data),
      createdAt: at.toISOString(),
      lastSeenAt: at.toISOString(),
      expiresAt: new Date(at.getTime() + ABSOLUTE_TIMEOUT_MS).toISOString(),
    });
    // Housekeeping: sessions past their absolute limit are of no use to anyone.
    await tx.delete(t.sessions).where(lt(t.sessions.expiresAt, at.toISOString()));
  });
  return sessionCookie.serialize(id, { maxAge: ABSOLUTE_TIMEOUT_MS / 1000 });
}

/**
 * Records a fresh authentication of the same person in their existing session (a sign-in
 * before signing): the session keeps its id and gets a new `signedInAt`. Returns false when
 * that session is gone or belongs to someone else (then a new session is started instead).
 */
export async function confirmSignIn(
  sessionId: string,
  personId: string,
  saml: { nameId?: string; sessionIndex?: string },
): Promise<boolean> {
  const at = isoNow();
  const data: SessionData = { signedInAt: at, ...saml };
  const rows = await writeTransaction((tx) =>
    tx
      .update(t.sessions)
      .set({ dataJson: JSON.stringify(data), lastSeenAt: at })
      .where(
        and(eq(t.sessions.id, sessionId), eq(t.sessions.personId, personId), gt(t.sessions.expiresAt, at)),
      )
      .returning({ id: t.sessions.id }),
  );
  return rows.length === 1;
}

/**
 * The signed-in person, or null when there is no live session (expired sessions are ended).
 * Read once per request (`oncePerRequest`): the cookie verified and the session read once, not
 * once per loader.
 */
export function getCurrentUser(request: Request): Promise<CurrentUser | null> {
  return oncePerRequest(request, "user", () => lookUpUser(request));
}

/** Every request reads its session: the query is built once (prepared), not per request. */
const sessionById = db
  .select({ session: t.sessions, person: t.people })
  .from(t.sessions)
  .innerJoin(t.people, eq(t.people.id, t.sessions.personId))
  .where(eq(t.sessions.id, sql.placeholder("id")))
  .limit(1)
  .prepare();

async function lookUpUser(request: Request): Promise<CurrentUser | null> {
  const id = await readSessionId(request);
  if (!id) return null;
  const [row] = await sessionById.all({ id });
  if (!row) return null;
  const now = Date.now();
  const idleFor = now - Date.parse(row.session.lastSeenAt);
  if (idleFor > IDLE_TIMEOUT_MS || now > Date.parse(row.session.expiresAt)) {
    await writeTransaction((tx) => tx.delete(t.sessions).where(eq(t.sessions.id, id)));
    return null;
  }
  if (idleFor > TOUCH_AFTER_MS) {
    await writeTransaction((tx) =>
      tx.update(t.sessions).set({ lastSeenAt: isoNow() }).where(eq(t.sessions.id, id)),
    );
  }
  const data = JSON.parse(row.session.dataJson) as SessionData;
  return {
    id: row.person.id,
    email: row.person.email,
    displayName: row.person.displayName,
    organisation: row.person.organisation,
    isAdmin: row.person.isAdmin,
    identitySource: row.person.identitySource,
    sessionId: id,
    signedInAt: data.signedInAt,
    nameId: data.nameId,
    sessionIndex: data.sessionIndex,
  };
}

/** Sends anonymous visitors to the sign-in page, remembering where they were going. */
export async function requireUser(request: Request): Promise<CurrentUser> {
  const user = await getCurrentUser(request);
  if (user) return user;
  // Client-side data requests arrive as `/path.data?_routes=…`: return to the page itself.
  const url = new URL(request.url);
  url.searchParams.delete("_routes");
  const returnTo = url.pathname.replace(/\.data$/, "").replace(/^\/_root$/, "/") + url.search;
  throw redirect(`/sign-in?returnTo=${encodeURIComponent(returnTo)}`);
}

/** Ends the browser's session; returns the Set-Cookie header value that clears the cookie. */
export async function endSession(request: Request): Promise<string> {
  forgetRequestReads(request);
  const id = await readSessionId(request);
  if (id) await writeTransaction((tx) => tx.delete(t.sessions).where(eq(t.sessions.id, id)));
  return sessionCookie.serialize("", { maxAge: 0 });
}

/**
 * Only paths of this application are followed after sign-in (no open redirects). The value is
 * parsed as a browser would, against the application's own origin, so tricks such as a tab or
 * newline after the first slash (which browsers drop, turning `/\t/host` into `//host`) or a
 * backslash cannot point elsewhere; control characters are refused outright.
 */
export function safeReturnTo(value: string | null | undefined): string {
  if (!value || !value.startsWith("/") || /[\u0000-\u001f\u007f\\]/.test(value)) return "/";
  const base = new URL(config.APP_URL);
  let url: URL;
  try {
    url = new URL(value, base);
  } catch {
    return "/";
  }
  if (url.origin !== base.origin) return "/";
  return `${url.pathname}${url.search}${url.hash}`;
}
