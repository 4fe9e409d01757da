/**
 * Starts this server process's background work: the migrations of dataset columns stored in the
 * former format and of rerun results stored in their rows (once each), and the job worker with every job handler registered. Called once from
 * the server entry.
 */
import { startEventLoopTrace } from "./diagnostics/event-loop-trace.server";
import { migrateStoredColumns } from "./datasets/stored-columns.server";
import { startJobWorker } from "./jobs/jobs.server";
import { registerMailJobs, startMailRetries } from "./mail/outbox.server";
import { registerRerunJobs } from "./reruns/reruns.server";
import { migrateStoredResults } from "./reruns/result-store.server";

/** Registers every job kind's handler (and failure hook) with this process's job worker. */
export function registerJobHandlers(): void {
  registerRerunJobs();
  registerMailJobs();
}

export function startBackgroundWork(): void {
  startEventLoopTrace();
  registerJobHandlers();
  // A version read before this pass reaches it is migrated on demand (stored-columns.server.ts).
  migrateStoredColumns().catch((e: unknown) =>
    console.error("Dataset columns migration:", e instanceof Error ? e.message : e),
  );
  // Results stored in their rerun's row move to their files; both places are read meanwhile.
  migrateStoredResults()
    .then(({ refused }) => {
      if (refused.length)
        console.error(
          `Rerun results not moved, their bytes differ from their recorded SHA-256: ${refused.join(", ")}`,
        );
    })
    .catch((e: unknown) => console.error("Rerun results migration:", e instanceof Error ? e.message : e));
  startJobWorker();
  startMailRetries();
}
