/** API: the studies a token's person holds a role on. */
import { requirePersonStudyPermission, type StudyAction } from "../permissions.server";
import { requireStudyForPrincipal } from "../study-access.server";
import { listStudiesFor, type Study } from "../studies.server";
import type { StudyRole } from "../db/schema";
import type { Body, StudiesAnswer, StudyAnswer } from "./schemas";
import type { ApiPrincipal } from "./tokens.server";

function studyOut(s: Study, role: StudyRole, allowed: Set<StudyAction>): Body<typeof StudyAnswer>["study"] {
  return {
    id: s.id,
    code: s.code,
    title: s.title,
    sponsor: s.sponsor,
    compound: s.compound,
    indication: s.indication,
    phase: s.phase,
    role,
    allowedActions: [...allowed].sort(),
  };
}

/** Every study the person may open, each checked by the same permission rule as the study pages. */
export async function listStudies(p: ApiPrincipal): Promise<Body<typeof StudiesAnswer>> {
  // Administrators get no study through the API by being administrators: only their study roles count.
  const candidates = await listStudiesFor({ id: p.person.id, isAdmin: false });
  const studies: Body<typeof StudiesAnswer>["studies"] = [];
  for (const s of candidates) {
    try {
      const { role, allowed } = await requirePersonStudyPermission(p.person, s.id, "study.view");
      if (role) studies.push(studyOut(s, role, allowed));
    } catch {
      // Not allowed to open this study: not listed.
    }
  }
  return { studies };
}

export async function getStudy(p: ApiPrincipal, studyId: string): Promise<Body<typeof StudyAnswer>> {
  const { study, role, allowed } = await requireStudyForPrincipal(p, studyId, "study.view");
  return { study: studyOut(study, role!, allowed) };
}
