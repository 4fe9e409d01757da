import { listPlanVersions } from "~/.server/api/plans.server";
import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.plan-versions";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => listPlanVersions(p, params.studyId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
