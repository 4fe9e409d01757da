import { Form, useNavigation } from "react-router";
import type { ScreenHitView } from "~/shared/datasets";
import { StatusLabel } from "~/components/status";
import { formatTime } from "./format";

/**
 * The identifier screen's hits. On a draft the data manager removes each flagged column or
 * records why it is not an identifier; locking waits until every hit is resolved.
 */
export function ScreenHits({
  hits,
  canDecide,
  errors,
  keyColumns,
}: {
  hits: ScreenHitView[];
  canDecide: boolean;
  errors: Record<string, string>;
  keyColumns: string[];
}) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle";
  if (hits.length === 0) {
    return (
      <section aria-labelledby="screen" className="panel p-4">
        <h2 id="screen" className="mb-1">
          Identifier screen
        </h2>
        <StatusLabel status="within" word="No direct identifiers found" />
        <p className="mt-1 text-xs text-ink-soft">
          Every column's name and all of its values were checked against the Safe Harbor categories.
        </p>
      </section>
    );
  }
  return (
    <section aria-labelledby="screen" className="panel">
      <h2 id="screen" className="border-b border-rule px-4 py-2">
        Identifier screen{" "}
        <span className="num text-sm font-normal text-ink-soft">
          ({hits.filter((h) => !h.resolution).length} open of {hits.length})
        </span>
      </h2>
      <ul className="divide-y divide-rule">
        {hits.map((h) => (
          <li key={h.id} className="grid gap-3 px-4 py-3 md:grid-cols-[1fr_22rem]">
            <div>
              <p className="font-semibold">
                {h.column} <span className="font-normal text-ink-soft">· {h.ruleLabel}</span>
              </p>
              <p className="text-xs text-ink-soft">
                {h.basis === "name"
                  ? "Flagged by the column name"
                  : `Flagged by its values: ${h.matches} cell${h.matches === 1 ? "" : "s"} match`}
                {h.maskedExamples.length > 0 ? "; masked examples:" : ""}
              </p>
              {h.maskedExamples.length > 0 ? (
                <p className="mt-0.5 font-mono text-xs">{h.maskedExamples.join("   ")}</p>
              ) : null}
            </div>
            <div>
              {h.resolution === "not_identifier" ? (
                <div className="text-sm">
                  <StatusLabel status="within" word="Not an identifier" />
                  <p className="mt-0.5 text-xs">“{h.rationale}”</p>
                  <p className="text-xs text-ink-soft">
                    {h.resolvedBy ?? "–"}, {formatTime(h.resolvedAt)}
                    {h.carriedFromVersion !== null
                      ? ` · carried forward from version ${h.carriedFromVersion} (same column and category)`
                      : ""}
                  </p>
                </div>
              ) : h.resolution === "removed" ? (
                <StatusLabel status="within" word="Column removed" />
              ) : canDecide ? (
                <Form method="post" className="space-y-2">
                  <input type="hidden" name="hitId" value={h.id} />
                  <label htmlFor={`rationale-${h.id}`} className="label">
                    Why it is not an identifier
                  </label>
                  <textarea
                    id={`rationale-${h.id}`}
                    name="rationale"
                    rows={2}
                    className="field"
                    aria-invalid={errors[h.id] ? true : undefined}
                    aria-describedby={errors[h.id] ? `rationale-${h.id}-error` : undefined}
                    placeholder="e.g. pseudonymous subject code assigned by the study"
                  />
                  {errors[h.id] ? (
                    <p
                      id={`rationale-${h.id}-error`}
                      className="text-xs font-medium text-finding"
                      role="alert"
                    >
                      {errors[h.id]}
                    </p>
                  ) : null}
                  <div className="flex flex-wrap gap-2">
                    <button
                      type="submit"
                      name="intent"
                      value="not_identifier"
                      className="btn"
                      disabled={busy}
                    >
                      Record: not an identifier
                    </button>
                    {keyColumns.includes(h.column) ? (
                      <span className="self-center text-xs text-ink-soft">
                        Key column: it cannot be removed.
                      </span>
                    ) : (
                      <button
                        type="submit"
                        name="intent"
                        value="remove_column"
                        className="btn-quiet"
                        disabled={busy}
                      >
                        Remove column {h.column}
                      </button>
                    )}
                  </div>
                </Form>
              ) : (
                <StatusLabel status="finding" word="Open" />
              )}
            </div>
          </li>
        ))}
      </ul>
    </section>
  );
}
