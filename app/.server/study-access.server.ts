/**
 * The guard every study page and study resource route starts with: signed in (else to
 * sign-in), the study exists (else 404), the person's role allows the action (else 403).
 */
import {
  requirePersonStudyPermission,
  requireStudyPermission,
  type StudyAccess,
  type StudyAction,
} from "./permissions.server";
import { requireUser } from "./session.server";
import { getStudyOr404, type Study } from "./studies.server";

export async function requireStudy(
  request: Request,
  studyId: string,
  action: StudyAction,
): Promise<StudyAccess & { study: Study }> {
  const user = await requireUser(request);
  const study = await getStudyOr404(studyId);
  const access = await requireStudyPermission(request, study.id, action, user);
  return { ...access, study };
}

/**
 * The same guard for a caller that is not a browser session: an API token acting for its
 * person. The study exists (else 404) and the person's role allows the action (else 403).
 */
export async function requireStudyForPrincipal(
  principal: { person: { id: string } },
  studyId: string,
  action: StudyAction,
): Promise<Omit<StudyAccess, "user"> & { study: Study }> {
  const study = await getStudyOr404(studyId);
  const access = await requirePersonStudyPermission(principal.person, study.id, action);
  return { ...access, study };
}
