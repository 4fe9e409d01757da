/**
 * The subjects a stored rerun document names: the id of every observation it used and of every
 * subject a check flagged. The redaction looks for these (`redaction.server.ts`), and the
 * compute thread answers them with a completed rerun so its notification is checked without
 * reading the document back. No database: the compute threads import it.
 */
import type { ViewDocument } from "./page-document";

export function* subjectIdsOf(doc: Pick<ViewDocument, "result" | "checks">): Generator<string> {
  const seen = new Set<string>();
  for (const id of doc.result.observations.id)
    if (id && !seen.has(id)) {
      seen.add(id);
      yield id;
    }
  for (const c of doc.checks)
    for (const f of c.flagged ?? [])
      if (f.id && !seen.has(f.id)) {
        seen.add(f.id);
        yield f.id;
      }
}
