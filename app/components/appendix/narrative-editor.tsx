import { Form } from "react-router";
import { SECTION_TITLES, type NarrativeSection } from "~/shared/appendix-content";
import { FieldError } from "../page";

/** What the page's action answered a narrative's save (or any other intent: then no `section`). */
export interface NarrativeResult {
  ok: boolean;
  message: string;
  section?: string;
  fieldError?: string;
}

/** The medical writer's narrative of one section: each save a new version. */
export function NarrativeEditor({
  section,
  planVersionId,
  body,
  versions,
  result,
  busy,
}: {
  section: NarrativeSection;
  planVersionId: string;
  body: string;
  versions: number;
  result: NarrativeResult | undefined;
  busy: boolean;
}) {
  const mine = result?.section === section ? result : undefined;
  const id = `narrative-${section}`;
  return (
    <Form method="post" className="panel mt-2 space-y-2 p-3" preventScrollReset>
      <input type="hidden" name="intent" value="narrate" />
      <input type="hidden" name="planVersionId" value={planVersionId} />
      <input type="hidden" name="section" value={section} />
      <label htmlFor={id} className="label">
        Narrative for “{SECTION_TITLES[section]}” {versions ? `(version ${versions} is shown)` : "(none yet)"}
      </label>
      <textarea
        id={id}
        name="body"
        defaultValue={body}
        rows={4}
        className="field w-full"
        aria-describedby={`${id}-help ${id}-error`}
      />
      <p id={`${id}-help`} className="text-xs text-ink-soft">
        Separate paragraphs with an empty line. Each save keeps a new version; everything else in the appendix
        comes from the signed results.
      </p>
      <FieldError id={`${id}-error`} message={mine?.fieldError} />
      <div className="flex items-center gap-3">
        <button type="submit" className="btn-quiet" disabled={busy}>
          Save narrative
        </button>
        {mine?.ok ? (
          <span role="status" className="text-xs text-ink-soft">
            {mine.message}
          </span>
        ) : null}
      </div>
    </Form>
  );
}
