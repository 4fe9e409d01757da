import { listAppendices } from "~/.server/api/appendices.server";
import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.appendices";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiAnswer(request, (p) => listAppendices(p, params.studyId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
