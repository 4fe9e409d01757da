import { StatusLabel } from "../status";

/** A queued or running rerun: what it waits for, with a moving bar. */
export function RunProgress({ queued }: { queued: boolean }) {
  return (
    <section className="panel mb-6 p-6" aria-live="polite">
      <StatusLabel
        status="pending"
        word={queued ? "Waiting for the worker" : "Fitting the model and running the checks"}
      />
      <div className="mt-3 h-1.5 w-full overflow-hidden rounded-sm bg-rule">
        <div className="h-full w-1/3 animate-pulse bg-accent" />
      </div>
    </section>
  );
}
