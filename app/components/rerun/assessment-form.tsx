import { Form } from "react-router";
import { ACTIONS, CATEGORIES, IMPACTS } from "~/shared/assessment-terms";
import { FieldError } from "../page";

/** The form that assesses a finding (`findingId`) or records a deviation no check produced. */
export function AssessmentForm({
  intent,
  findingId,
  errors,
  busy,
}: {
  intent: "assess" | "deviation";
  findingId?: string;
  errors: Record<string, string>;
  busy: boolean;
}) {
  const id = findingId ?? "deviation";
  return (
    <Form method="post" className="grid gap-2 md:grid-cols-3" preventScrollReset>
      <input type="hidden" name="intent" value={intent} />
      {findingId ? <input type="hidden" name="findingId" value={findingId} /> : null}
      {(
        [
          ["category", "Category", CATEGORIES],
          ["impact", "Impact on the treatment conclusion", IMPACTS],
          ["action", "Action taken", ACTIONS],
        ] as const
      ).map(([name, label, options]) => (
        <div key={name}>
          <label htmlFor={`${id}-${name}`} className="label">
            {label}
          </label>
          <select
            id={`${id}-${name}`}
            name={name}
            className="field"
            defaultValue=""
            aria-invalid={errors[name] ? true : undefined}
          >
            <option value="" disabled>
              Choose…
            </option>
            {Object.entries(options).map(([v, l]) => (
              <option key={v} value={v}>
                {l}
              </option>
            ))}
          </select>
          <FieldError id={`${id}-${name}-error`} message={errors[name]} />
        </div>
      ))}
      <div className="md:col-span-3">
        <label htmlFor={`${id}-rationale`} className="label">
          Rationale
        </label>
        <textarea
          id={`${id}-rationale`}
          name="rationale"
          rows={2}
          className="field"
          aria-invalid={errors.rationale ? true : undefined}
        />
        <FieldError id={`${id}-rationale-error`} message={errors.rationale} />
      </div>
      <div>
        <button type="submit" className="btn" disabled={busy}>
          {intent === "assess" ? "Record the assessment" : "Record the deviation"}
        </button>
      </div>
    </Form>
  );
}
