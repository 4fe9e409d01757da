/**
 * Starts the fake SMTP server from the command line and keeps it running:
 *   tsx idp-fake/smtp/start.ts --port 2525 --state-dir data/smtp
 * Optional: --host (default 127.0.0.1). Received messages land in <state-dir>/inbox.
 */
import { parseArgs } from "node:util";
import { startSmtpFake } from "./launch";

const { values } = parseArgs({
  options: {
    port: { type: "string", default: "2525" },
    host: { type: "string", default: "127.0.0.1" },
    "state-dir": { type: "string", default: "data/smtp" },
  },
});

const smtp = await startSmtpFake({
  port: Number(values.port),
  host: values.host,
  stateDir: values["state-dir"],
});

console.log(`Fake SMTP server ready at ${smtp.smtpHost}:${smtp.smtpPort}`);
console.log(`  SMTP_HOST=${smtp.smtpHost}`);
console.log(`  SMTP_PORT=${smtp.smtpPort}`);
console.log(`  SMTP_FAKE_INBOX_DIR=${smtp.inboxDir}`);

let stopping = false;
const stop = (): void => {
  if (stopping) return;
  stopping = true;
  void smtp.stop().then(() => process.exit(0));
};
process.on("SIGINT", stop);
process.on("SIGTERM", stop);
