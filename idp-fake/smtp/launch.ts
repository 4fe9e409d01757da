/**
 * Starts the local fake SMTP server (the npm package `smtp-server`, in child.ts) as its own
 * process and resolves when it listens. Port 0 picks a free port; the port it got is returned.
 * Received messages are kept as files in `<stateDir>/inbox` (see inbox.ts).
 */
import { spawn } from "node:child_process";
import { mkdirSync } from "node:fs";
import { createRequire } from "node:module";
import path from "node:path";
import { createInterface } from "node:readline";
import { fileURLToPath, pathToFileURL } from "node:url";
import { inboxDirOf } from "./inbox";
import { ownChild } from "../owned-child";

export interface SmtpFakeOptions {
  /** SMTP port to listen on; 0 for a free one. */
  port: number;
  /** Interface to listen on; 127.0.0.1 unless told otherwise. */
  host?: string;
  /** Folder for the inbox (received messages as .json and .eml). */
  stateDir: string;
}

export interface RunningSmtpFake {
  smtpHost: string;
  smtpPort: number;
  /** Where received messages are kept (SMTP_FAKE_INBOX_DIR for the app's outbox page). */
  inboxDir: string;
  stop(): Promise<void>;
}

const here = path.dirname(fileURLToPath(import.meta.url));
const require = createRequire(import.meta.url);

export async function startSmtpFake(opts: SmtpFakeOptions): Promise<RunningSmtpFake> {
  const host = opts.host ?? "127.0.0.1";
  const stateDir = path.resolve(opts.stateDir);
  mkdirSync(stateDir, { recursive: true });
  // tsx's loader by absolute URL, so the child runs whatever the current folder is.
  const tsx = pathToFileURL(
    path.join(path.dirname(require.resolve("tsx/package.json")), "dist", "loader.mjs"),
  ).href;
  const child = spawn(
    process.execPath,
    [
      "--import",
      tsx,
      path.join(here, "child.ts"),
      "--port",
      String(opts.port),
      "--host",
      host,
      "--state-dir",
      stateDir,
    ],
    { stdio: ["pipe", "pipe", "pipe"], env: { ...process.env, FORCE_COLOR: "0" } },
  );
  let stderr = "";
  child.stderr.setEncoding("utf8");
  child.stderr.on("data", (s: string) => {
    stderr += s;
  });
  const owned = ownChild(child);

  const smtpPort = await new Promise<number>((resolve, reject) => {
    const timer = setTimeout(() => {
      owned.kill();
      reject(new Error(`The SMTP fake did not start listening within 20 s. ${stderr.trim()}`));
    }, 20_000);
    const lines = createInterface({ input: child.stdout });
    lines.on("line", (line) => {
      try {
        const { listening } = JSON.parse(line) as { listening?: number };
        if (typeof listening === "number") {
          clearTimeout(timer);
          resolve(listening);
        }
      } catch {
        // not the ready line
      }
    });
    child.once("exit", (code) => {
      clearTimeout(timer);
      reject(new Error(stderr.trim() || `The SMTP fake exited with code ${code} before it listened.`));
    });
  });

  let stopped = false;
  return {
    smtpHost: host,
    smtpPort,
    inboxDir: inboxDirOf(stateDir),
    async stop() {
      if (stopped) return;
      stopped = true;
      await owned.stop();
    },
  };
}
