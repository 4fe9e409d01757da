import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import { getStudy } from "~/.server/api/studies.server";
import type { Route } from "./+types/api.v1.study";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => getStudy(p, params.studyId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
