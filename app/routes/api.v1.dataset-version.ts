import { getDatasetVersion } from "~/.server/api/datasets.server";
import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.dataset-version";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => getDatasetVersion(p, params.studyId, params.datasetId, params.versionId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
