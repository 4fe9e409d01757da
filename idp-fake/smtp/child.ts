/**
 * The fake SMTP server itself, run as its own process by launch.ts:
 *   node --import tsx idp-fake/smtp/child.ts --port 2525 --host 127.0.0.1 --state-dir data/smtp
 * Accepts every message (no authentication, no TLS: loopback only), parses it with mailparser
 * and keeps it in <state-dir>/inbox as JSON and .eml. Prints one line {"listening":PORT} when
 * ready. Ends when its standard input closes, that is when the process that started it ends,
 * even if that process was killed outright.
 */
import { randomUUID } from "node:crypto";
import { mkdirSync, renameSync, writeFileSync } from "node:fs";
import type { AddressInfo } from "node:net";
import path from "node:path";
import { parseArgs } from "node:util";
import { simpleParser, type AddressObject } from "mailparser";
import { SMTPServer } from "smtp-server";
import { inboxDirOf, type ReceivedMessage } from "./inbox";

const { values } = parseArgs({
  options: {
    port: { type: "string", default: "2525" },
    host: { type: "string", default: "127.0.0.1" },
    "state-dir": { type: "string", default: "data/smtp" },
  },
});

const inboxDir = inboxDirOf(values["state-dir"]);
mkdirSync(inboxDir, { recursive: true });

function addresses(a: AddressObject | AddressObject[] | undefined): string {
  if (!a) return "";
  return (Array.isArray(a) ? a : [a]).map((x) => x.text).join(", ");
}

/** Writes through a temporary name, so a reader never sees half a file. */
function writeWhole(file: string, body: string | Buffer): void {
  const tmp = `${file}.part`;
  writeFileSync(tmp, body);
  renameSync(tmp, file);
}

const server = new SMTPServer({
  banner: "Plumbline SMTP fake",
  secure: false,
  authOptional: true,
  disabledCommands: ["AUTH", "STARTTLS"],
  size: 10 * 1024 * 1024,
  logger: false,
  onData(stream, session, callback) {
    const chunks: Buffer[] = [];
    stream.on("data", (c: Buffer) => chunks.push(c));
    stream.on("end", () => {
      const raw = Buffer.concat(chunks);
      simpleParser(raw)
        .then((parsed) => {
          const receivedAt = new Date().toISOString();
          const id = randomUUID();
          const message: ReceivedMessage = {
            id,
            receivedAt,
            envelopeFrom: session.envelope.mailFrom ? session.envelope.mailFrom.address : "",
            envelopeTo: session.envelope.rcptTo.map((r) => r.address),
            from: addresses(parsed.from),
            to: addresses(parsed.to),
            subject: parsed.subject ?? "",
            messageId: parsed.messageId ?? null,
            text: parsed.text ?? "",
            html: typeof parsed.html === "string" ? parsed.html : "",
          };
          const base = path.join(inboxDir, `${receivedAt.replace(/[:.]/g, "-")}-${id}`);
          writeWhole(`${base}.eml`, raw);
          writeWhole(`${base}.json`, `${JSON.stringify(message, null, 2)}\n`);
          callback();
        })
        .catch((e: unknown) => callback(e instanceof Error ? e : new Error(String(e))));
    });
  },
});

server.on("error", (e) => console.error(`SMTP fake: ${e.message}`));

process.stdin.on("end", () => process.exit(0));
process.stdin.on("error", () => process.exit(0));
process.stdin.resume();
process.on("SIGTERM", () => server.close(() => process.exit(0)));

server.server.once("error", (e: NodeJS.ErrnoException) => {
  console.error(
    e.code === "EADDRINUSE"
      ? `Port ${values.port} on ${values.host} is already in use: stop what is using it or start the SMTP fake on another port.`
      : `The SMTP fake could not listen on ${values.host}:${values.port}: ${e.message}`,
  );
  process.exit(2);
});
server.listen(Number(values.port), values.host, () => {
  const { port } = server.server.address() as AddressInfo;
  process.stdout.write(`${JSON.stringify({ listening: port })}\n`);
});
