/**
 * A local fake's child process, owned by the process that launched it: ended with it if nobody
 * stops it, and stopped with SIGTERM, then SIGKILL after 3 s.
 */
import type { ChildProcess } from "node:child_process";

export interface OwnedChild {
  /** Resolves when the child has exited. */
  exited: Promise<void>;
  /** Sends SIGTERM if the child still runs; does not wait. */
  kill(): void;
  /** Stops the child and waits until it has exited (at most about 3 s). */
  stop(): Promise<void>;
}

export function ownChild(child: ChildProcess): OwnedChild {
  const exited = new Promise<void>((resolve) => child.once("exit", () => resolve()));
  const kill = (): void => {
    if (child.exitCode === null) child.kill("SIGTERM");
  };
  // if this process ends without stopping the fake, do not leave it running on its own
  process.once("exit", kill);
  return {
    exited,
    kill,
    async stop() {
      process.removeListener("exit", kill);
      if (child.pid && child.exitCode === null) {
        process.kill(child.pid, "SIGTERM");
        const timer = setTimeout(
          () => child.exitCode === null && child.pid && process.kill(child.pid, "SIGKILL"),
          3000,
        );
        await exited;
        clearTimeout(timer);
      }
    },
  };
}
