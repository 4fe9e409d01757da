/**
 * The fake SMTP server's inbox on disk: one JSON file per received message (plus the raw
 * message as .eml beside it) in `<stateDir>/inbox`. Written by child.ts, read by tests and by
 * the demo's administrator outbox page (which reads the same files through SMTP_FAKE_INBOX_DIR).
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import path from "node:path";

export interface ReceivedMessage {
  id: string;
  /** ISO 8601 UTC time the fake accepted the message. */
  receivedAt: string;
  /** SMTP envelope: MAIL FROM and every RCPT TO. */
  envelopeFrom: string;
  envelopeTo: string[];
  /** Header fields as parsed from the message. */
  from: string;
  to: string;
  subject: string;
  messageId: string | null;
  text: string;
  html: string;
}

export const inboxDirOf = (stateDir: string): string => path.join(path.resolve(stateDir), "inbox");

/** Every message received so far, oldest first. */
export function readInbox(stateDir: string): ReceivedMessage[] {
  const dir = inboxDirOf(stateDir);
  if (!existsSync(dir)) return [];
  return readdirSync(dir)
    .filter((f) => f.endsWith(".json"))
    .sort()
    .map((f) => JSON.parse(readFileSync(path.join(dir, f), "utf8")) as ReceivedMessage);
}

/** Waits until a received message matches, or fails naming what did arrive. */
export async function waitForMessage(
  stateDir: string,
  matches: (m: ReceivedMessage) => boolean,
  timeoutMs = 10_000,
): Promise<ReceivedMessage> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const found = readInbox(stateDir).find(matches);
    if (found) return found;
    if (Date.now() > deadline) {
      const seen = readInbox(stateDir).map((m) => `${m.envelopeTo.join(",")}: ${m.subject}`);
      throw new Error(
        `No matching message reached the SMTP fake within ${timeoutMs} ms; it has ${seen.length ? seen.join(" | ") : "none"}.`,
      );
    }
    await new Promise((r) => setTimeout(r, 100));
  }
}
