/**
 * Starts this server process's background work: the migration of dataset columns stored in the
 * former format (once), and the job worker with every job handler registered. Called once from
 * the server entry.
 */
import { migrateStoredColumns } from "./datasets/stored-columns.server";
import { startJobWorker } from "./jobs/jobs.server";
import { registerMailJobs, startMailRetries } from "./mail/outbox.server";
import { registerRerunJobs } from "./reruns/reruns.server";

/** Registers every job kind's handler (and failure hook) with this process's job worker. */
export function registerJobHandlers(): void {
  registerRerunJobs();
  registerMailJobs();
}

export function startBackgroundWork(): void {
  registerJobHandlers();
  // A version read before this pass reaches it is migrated on demand (stored-columns.server.ts).
  migrateStoredColumns().catch((e: unknown) =>
    console.error("Dataset columns migration:", e instanceof Error ? e.message : e),
  );
  startJobWorker();
  startMailRetries();
}
