import { StatusLabel } from "../status";

/** A failed rerun: why it could not be estimated as planned. */
export function RunFailure({ reason }: { reason: string | null }) {
  return (
    <section className="panel mb-6 p-4">
      <StatusLabel status="finding" word="Not estimable as planned" />
      <p className="mt-2 text-sm">{reason}</p>
      <p className="mt-1 text-xs text-ink-soft">
        The rerun is kept as failed with this reason; assess the finding below and record the deviation.
      </p>
    </section>
  );
}
