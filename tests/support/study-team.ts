/**
 * A study of a browser test made through the services on the stack's database, with its team, so
 * that a test that plans, reruns or signs never changes what other tests find in QMT-301. The
 * caller sets DATABASE_URL, DATA_DIR and MIGRATIONS_DIR to the stack's before calling.
 */
import type { Stack } from "./global-setup";
import { personId } from "./sessions";

export type StudyRole = "data_manager" | "biostatistician" | "medical_writer";

export async function createStudyWithTeam(
  stack: Stack,
  study: { code: string; title: string },
  team: readonly (readonly [email: string, role: StudyRole])[],
): Promise<void> {
  const { createStudy } = await import("~/.server/studies.server");
  const { setStudyRole } = await import("~/.server/people.server");
  const admin = {
    id: await personId(stack, "morgan.reyes@plumbline.example"),
    name: "Morgan Reyes",
    organisation: null,
  };
  const created = await createStudy(admin, {
    code: study.code,
    title: study.title,
    sponsor: "Quillmoor Therapeutics",
    compound: null,
    indication: null,
    phase: "3",
  });
  if (!created.ok) throw new Error(JSON.stringify(created.fieldErrors));
  for (const [email, role] of team)
    await setStudyRole(admin, created.study.id, await personId(stack, email), role);
}
