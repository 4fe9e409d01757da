import { Form, useNavigation } from "react-router";
import { FieldError } from "~/components/page";

/**
 * Purging a superseded version that was never locked: a confirmation box, then the button. The
 * server refuses without the confirmation, and records the purge in the audit trail.
 */
export function PurgeVersion({ version, error }: { version: number; error?: string }) {
  const navigation = useNavigation();
  return (
    <section aria-labelledby="purge" className="panel mb-4 p-4">
      <h2 id="purge" className="mb-1 text-base">
        Purge version {version}
      </h2>
      <p className="mb-2 text-xs text-ink-soft">
        This version was superseded and never locked. Purging removes its stored file and parsed columns
        (unless another version holds the same bytes); its record, screen results and audit history stay.
      </p>
      <Form method="post" className="space-y-2">
        <label className="flex items-center gap-2 text-sm">
          <input
            type="checkbox"
            name="confirm"
            value="yes"
            aria-describedby={error ? "purge-error" : undefined}
          />
          I understand that the file of version {version} is removed for good.
        </label>
        <FieldError id="purge-error" message={error} />
        <button
          type="submit"
          name="intent"
          value="purge"
          className="btn-quiet"
          disabled={navigation.state !== "idle"}
        >
          Purge version {version}
        </button>
      </Form>
    </section>
  );
}
