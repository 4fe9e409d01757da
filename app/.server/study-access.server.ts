/**
 * The guard every study page and study resource route starts with: signed in (else to
 * sign-in), the study exists (else 404), the person's role allows the action (else 403).
 */
import { studyRoleOf } from "./people.server";
import { oncePerRequest } from "./request-reads.server";
import {
  requirePersonStudyPermission,
  requireRolePermits,
  type StudyAccess,
  type StudyAction,
  type StudyRole,
} from "./permissions.server";
import { requireUser, type CurrentUser } from "./session.server";
import { getStudyOr404, type Study } from "./studies.server";

export async function requireStudy(
  request: Request,
  studyId: string,
  action: StudyAction,
): Promise<StudyAccess & { study: Study }> {
  const user = await requireUser(request);
  const { study, role } = await studyAndRole(request, user, studyId);
  return { user, ...requireRolePermits(role, action), study };
}

/**
 * The study and the person's role on it, read once per request (`oncePerRequest`): the study
 * layout's loader and the page's run in parallel, each with its own action to check (checked
 * each time, from the role).
 */
function studyAndRole(
  request: Request,
  user: CurrentUser,
  studyId: string,
): Promise<{ study: Study; role: StudyRole | null }> {
  return oncePerRequest(request, `study:${user.id}:${studyId}`, async () => {
    const study = await getStudyOr404(studyId);
    return { study, role: await studyRoleOf(user.id, study.id) };
  });
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
