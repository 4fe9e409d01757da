/**
 * Starts the local fake sponsor OpenID Connect provider (server.ts: oauth2-mock-server with a
 * sponsor-person picker) in its own child process, which ends when this process ends, and
 * resolves when its discovery document answers.
 */
import { spawn } from "node:child_process";
import { createWriteStream, mkdirSync, readFileSync } from "node:fs";
import { createRequire } from "node:module";
import path from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import type { OidcFakeOptions } from "./server";
import { ownChild } from "../owned-child";

export interface StartOidcFakeOptions {
  port: number;
  /** Folder for the signing key and the log. */
  stateDir: string;
  /** Interface to listen on; 127.0.0.1 unless told otherwise. */
  host?: string;
  /** The client Plumbline is registered as (OIDC_CLIENT_ID, OIDC_CLIENT_SECRET). */
  clientId?: string;
  clientSecret?: string;
  /** Plumbline's public URL; its /auth/oidc/callback becomes the only registered redirect URI. */
  appUrl?: string;
}

export interface RunningOidcFake {
  /** OIDC_ISSUER: discovery is at `${issuerUrl}/.well-known/openid-configuration`. */
  issuerUrl: string;
  clientId: string;
  clientSecret: string;
  stop(): Promise<void>;
}

export const DEMO_CLIENT_ID = "plumbline";
export const DEMO_CLIENT_SECRET = "plumbline-demo-oidc-secret";

const here = path.dirname(fileURLToPath(import.meta.url));
const require = createRequire(import.meta.url);

export async function startOidcFake(opts: StartOidcFakeOptions): Promise<RunningOidcFake> {
  const stateDir = path.resolve(opts.stateDir);
  mkdirSync(stateDir, { recursive: true });
  const options: OidcFakeOptions = {
    host: opts.host ?? "127.0.0.1",
    port: opts.port,
    stateDir,
    clientId: opts.clientId ?? DEMO_CLIENT_ID,
    clientSecret: opts.clientSecret ?? DEMO_CLIENT_SECRET,
    redirectUris: opts.appUrl ? [`${opts.appUrl.replace(/\/+$/, "")}/auth/oidc/callback`] : [],
  };
  const logFile = path.join(stateDir, "oidc-fake.log");
  const log = createWriteStream(logFile, { flags: "a" });
  const tsx = pathToFileURL(require.resolve("tsx")).href;
  const child = spawn(
    process.execPath,
    ["--import", tsx, path.join(here, "child.ts"), JSON.stringify(options)],
    {
      stdio: ["pipe", "pipe", "pipe"],
      env: { ...process.env, FORCE_COLOR: "0" },
    },
  );
  child.stdout?.pipe(log);
  child.stderr?.pipe(log);
  const owned = ownChild(child);

  const issuerUrl = `http://${options.host.includes(":") ? `[${options.host}]` : options.host}:${options.port}`;
  const deadline = Date.now() + 20_000;
  for (;;) {
    if (child.exitCode !== null) {
      await new Promise((r) => log.end(r));
      const tail = readFileSync(logFile, "utf8").trim().split("\n").slice(-3).join(" ");
      throw new Error(
        `The fake OpenID Connect provider exited with code ${child.exitCode}: ${tail} (log: ${logFile}).`,
      );
    }
    try {
      const res = await fetch(`${issuerUrl}/.well-known/openid-configuration`, {
        signal: AbortSignal.timeout(1000),
      });
      if (res.ok) break;
    } catch {
      // not listening yet
    }
    if (Date.now() > deadline) {
      owned.kill();
      throw new Error(
        `The fake OpenID Connect provider did not answer at ${issuerUrl} within 20 s; see ${logFile}.`,
      );
    }
    await new Promise((r) => setTimeout(r, 150));
  }

  let stopped = false;
  return {
    issuerUrl,
    clientId: options.clientId,
    clientSecret: options.clientSecret,
    async stop() {
      if (stopped) return;
      stopped = true;
      await owned.stop();
      log.end();
    },
  };
}
