/**
 * Starts this server process's background work: the job worker with every job handler
 * registered. Called once from the server entry.
 */
import { startJobWorker } from "./jobs/jobs.server";
import { startMailRetries } from "./mail/outbox.server";
// Registers the rerun job's handler and failure hook.
import "./reruns/reruns.server";

export function startBackgroundWork(): void {
  startJobWorker();
  startMailRetries();
}
