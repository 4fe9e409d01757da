import { getPlanVersionWithModels } from "~/.server/api/plans.server";
import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.plan-version";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => getPlanVersionWithModels(p, params.studyId, params.versionId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
