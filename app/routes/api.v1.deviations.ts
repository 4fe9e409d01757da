import { listDeviations } from "~/.server/api/deviations.server";
import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.deviations";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => listDeviations(p, params.studyId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
