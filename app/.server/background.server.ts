/**
 * Starts this server process's background work: the job worker with every job handler
 * registered. Called once from the server entry.
 */
import { startJobWorker } from "./jobs/jobs.server";
import { startMailRetries } from "./mail/outbox.server";
import { failRerunOfJob, RERUN_JOB } from "./reruns/reruns.server";

export function startBackgroundWork(): void {
  startJobWorker(async (job) => {
    if (job.kind === RERUN_JOB) await failRerunOfJob(job);
  });
  startMailRetries();
}
