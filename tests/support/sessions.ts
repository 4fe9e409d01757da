/**
 * Test sessions without a browser: inserts a session row for a demo person straight into the
 * test database and signs the cookie with the server's secret, exactly as sign-in would.
 */
import { randomBytes } from "node:crypto";
import { createClient, type Client } from "@libsql/client";
import { createCookie } from "react-router";
import type { Stack } from "./global-setup";

let client: Client | null = null;

export function testDb(stack: Stack): Client {
  client ??= createClient({ url: `file:${stack.dbFile}`, timeout: 10_000 });
  return client;
}

export async function personId(stack: Stack, email: string): Promise<string> {
  const rs = await testDb(stack).execute({ sql: "SELECT id FROM people WHERE email = ?", args: [email] });
  const id = rs.rows[0]?.id;
  if (typeof id !== "string") throw new Error(`No person with e-mail ${email} in the test database`);
  return id;
}

/** A `Cookie` header value for a live session of the person with this e-mail. */
export async function sessionCookieFor(stack: Stack, email: string): Promise<string> {
  const pid = await personId(stack, email);
  const id = randomBytes(32).toString("base64url");
  const now = new Date();
  await testDb(stack).execute({
    sql: "INSERT INTO sessions (id, person_id, data_json, created_at, last_seen_at, expires_at) VALUES (?, ?, ?, ?, ?, ?)",
    args: [
      id,
      pid,
      JSON.stringify({ signedInAt: now.toISOString() }),
      now.toISOString(),
      now.toISOString(),
      new Date(now.getTime() + 3600_000).toISOString(),
    ],
  });
  const cookie = createCookie("plumbline_session", { secrets: [stack.sessionSecret] });
  return (await cookie.serialize(id)).split(";")[0];
}

export async function studyIdByCode(stack: Stack, code: string): Promise<string> {
  const rs = await testDb(stack).execute({ sql: "SELECT id FROM studies WHERE code = ?", args: [code] });
  const id = rs.rows[0]?.id;
  if (typeof id !== "string") throw new Error(`No study ${code} in the test database`);
  return id;
}
