/**
 * The redaction of a viewer who sees subjects (`redaction.server.ts` answers it for them): every
 * text as it is. Its own module, without the database, so the compute thread can make a results
 * view with it (derive-page.ts).
 */
import type { Redaction } from "./redaction.server";

export const IDENTITY: Redaction = {
  seesSubjects: true,
  text: (v) => v,
  maybe: (v) => v,
  countOnly: (v) => v,
  flagged: (c) =>
    (c.flagged ?? []).slice(0, 5).map((f) => ({ rank: f.rank, value: f.value, who: f.id ?? `row ${f.row}` })),
  leak: () => null,
  assertClean: (v) => v,
};
