/**
 * The guard every study page and study resource route starts with: signed in (else to
 * sign-in), the study exists (else 404), the person's role allows the action (else 403).
 */
import { requireStudyPermission, type StudyAccess, type StudyAction } from "./permissions.server";
import { requireUser } from "./session.server";
import { getStudyOr404, type Study } from "./studies.server";

export async function requireStudy(request: Request, studyId: string, action: StudyAction): Promise<StudyAccess & { study: Study }> {
  const user = await requireUser(request);
  const study = await getStudyOr404(studyId);
  const access = await requireStudyPermission(request, study.id, action, user);
  return { ...access, study };
}
