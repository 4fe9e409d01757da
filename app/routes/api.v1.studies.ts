import { apiAnswer, methodNotAllowed } from "~/.server/api/respond.server";
import { listStudies } from "~/.server/api/studies.server";
import type { Route } from "./+types/api.v1.studies";

export const loader = ({ request }: Route.LoaderArgs) => apiAnswer(request, (p) => listStudies(p));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
