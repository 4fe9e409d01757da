/**
 * Starts the built Plumbline server (`node server.mjs build/server/index.js`) as a child
 * process and waits until it answers /healthz. The server binary is started directly (not
 * through npm) so that stopping it by its own pid really stops it.
 */
import { spawn, type ChildProcess } from "node:child_process";
import path from "node:path";

export interface RunningApp {
  url: string;
  process: ChildProcess;
  /** The last 8 000 characters the server wrote (with output "pipe"). */
  log(): string;
  stop(): Promise<void>;
}

export async function startAppServer(opts: {
  port: number;
  host?: string;
  env: Record<string, string>;
  root?: string;
  /** Where server output goes: "inherit" for the demo, "pipe" (kept for error messages) for tests. */
  output?: "inherit" | "pipe";
}): Promise<RunningApp> {
  const root = opts.root ?? process.cwd();
  const host = opts.host ?? "127.0.0.1";
  const child = spawn(
    process.execPath,
    [path.join(root, "server.mjs"), path.join(root, "build/server/index.js")],
    {
      cwd: root,
      env: { ...process.env, NODE_ENV: "production", ...opts.env, PORT: String(opts.port), HOST: host },
      stdio: opts.output === "inherit" ? "inherit" : ["ignore", "pipe", "pipe"],
    },
  );
  let log = "";
  child.stdout?.on("data", (d: Buffer) => (log = (log + d.toString()).slice(-8000)));
  child.stderr?.on("data", (d: Buffer) => (log = (log + d.toString()).slice(-8000)));
  const url = `http://${host}:${opts.port}`;
  const deadline = Date.now() + 60_000;
  for (;;) {
    if (child.exitCode !== null)
      throw new Error(`The Plumbline server exited with code ${child.exitCode} while starting:\n${log}`);
    try {
      const res = await fetch(`${url}/healthz`);
      if (res.ok) break;
    } catch {
      // not listening yet
    }
    if (Date.now() > deadline) {
      child.kill("SIGKILL");
      throw new Error(`The Plumbline server did not answer /healthz within 60 s:\n${log}`);
    }
    await new Promise((r) => setTimeout(r, 150));
  }
  return {
    url,
    process: child,
    log: () => log,
    stop: () =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null) return resolve();
        child.once("exit", () => resolve());
        child.kill("SIGTERM");
        setTimeout(() => child.kill("SIGKILL"), 3000).unref();
      }),
  };
}

/** A free TCP port on the loopback interface. */
export async function freePort(): Promise<number> {
  const net = await import("node:net");
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.unref();
    srv.on("error", reject);
    srv.listen(0, "127.0.0.1", () => {
      const { port } = srv.address() as { port: number };
      srv.close(() => resolve(port));
    });
  });
}
