import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import { getStudyRerun } from "~/.server/api/reruns.server";
import type { Route } from "./+types/api.v1.rerun";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => getStudyRerun(p, params.studyId, params.rerunId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
