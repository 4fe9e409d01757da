/** What the appendix page does: save a section's narrative, export the Word appendix. */
import { actorOf } from "../people.server";
import type { StudyAccess } from "../permissions.server";
import { getPlanVersion } from "../plans/plans.server";
import type { Study } from "../studies.server";
import { AppendixRefused, exportAppendix } from "./appendix.server";
import type { AppendixScope } from "./build-content.server";
import { NarrativeInput, saveNarrative } from "./narratives.server";

export type AppendixActionResult = {
  ok: boolean;
  message: string;
  section?: string;
  fieldError?: string;
  exported?: { id: string; sha256: string };
};
type Access = Pick<StudyAccess, "user"> & { study: Study };

/** Saves a new version of a section's narrative for a plan version of the study. */
export async function narrate(
  { study, user }: Access,
  planVersionId: string,
  section: string,
  body: string,
): Promise<AppendixActionResult> {
  const n = NarrativeInput.safeParse({ section, body });
  if (!n.success) return { ok: false, message: "", section, fieldError: n.error.issues[0]?.message };
  await getPlanVersion(study.id, planVersionId);
  const version = await saveNarrative(actorOf(user), study.id, planVersionId, n.data.section, n.data.body);
  return {
    ok: true,
    section: n.data.section,
    message: version ? `Saved as version ${version}.` : "Nothing to save yet.",
  };
}

/** Exports the Word appendix of one signed rerun or of a plan version's signed reruns; a refusal (storage) in words. */
export async function exportWordAppendix(
  { study, user }: Access,
  scope: AppendixScope,
): Promise<AppendixActionResult> {
  try {
    const row = await exportAppendix(actorOf(user), study.id, scope);
    return {
      ok: true,
      message: `Exported. SHA-256 ${row.sha256}.`,
      exported: { id: row.id, sha256: row.sha256 },
    };
  } catch (e) {
    if (e instanceof AppendixRefused) return { ok: false, message: e.message };
    throw e;
  }
}
