import { listStudyDatasets } from "~/.server/api/datasets.server";
import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.datasets";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => listStudyDatasets(p, params.studyId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
