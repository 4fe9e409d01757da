import type { ReactNode } from "react";

/**
 * A route's `handle` may name what its page starts in the document's head, before the stylesheet
 * (`headStart`, given the route's loader data): an inline script there runs as soon as the HTML
 * is read, where one after the stylesheet waits until the stylesheet has arrived. The results
 * page starts its figure worker this way.
 */
export interface HeadStartHandle {
  headStart: (data: unknown) => ReactNode;
}

function isHeadStartHandle(handle: unknown): handle is HeadStartHandle {
  return (
    typeof handle === "object" &&
    handle !== null &&
    typeof (handle as Partial<HeadStartHandle>).headStart === "function"
  );
}

/** What a matched route starts in the head, or nothing (no such handle, or no data, as on an error page). */
export function headStartOf(handle: unknown, data: unknown): ReactNode {
  return isHeadStartHandle(handle) && data !== undefined ? handle.headStart(data) : null;
}
