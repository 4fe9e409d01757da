import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import { listStudyReruns } from "~/.server/api/reruns.server";
import type { Route } from "./+types/api.v1.reruns";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => listStudyReruns(p, params.studyId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
