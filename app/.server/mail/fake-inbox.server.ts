/**
 * Demo and tests only: the messages the local SMTP fake received (idp-fake/smtp keeps each as a
 * JSON file in its inbox folder), so the administrator's outbox page can show what arrived.
 * Off unless SMTP_FAKE_INBOX_DIR is set; a real installation sends to a real mail server.
 */
import { existsSync } from "node:fs";
import { readdir, readFile } from "node:fs/promises";
import path from "node:path";
import { z } from "zod";
import { config } from "../config.server";

const Received = z.object({
  id: z.string(),
  receivedAt: z.string(),
  envelopeTo: z.array(z.string()),
  subject: z.string(),
  text: z.string(),
});
export type ReceivedByFake = z.infer<typeof Received>;

/** The newest `limit` messages first, or null when no SMTP fake is configured. */
export async function fakeInbox(limit = 100): Promise<{ dir: string; messages: ReceivedByFake[] } | null> {
  const dir = config.SMTP_FAKE_INBOX_DIR;
  if (!dir) return null;
  if (!existsSync(dir)) return { dir, messages: [] };
  const files = (await readdir(dir))
    .filter((f) => f.endsWith(".json"))
    .sort()
    .reverse()
    .slice(0, limit);
  const messages: ReceivedByFake[] = [];
  for (const f of files) {
    const parsed = Received.safeParse(JSON.parse(await readFile(path.join(dir, f), "utf8")));
    if (parsed.success) messages.push(parsed.data);
  }
  return { dir, messages };
}
