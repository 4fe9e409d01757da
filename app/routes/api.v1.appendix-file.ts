import { appendixFile } from "~/.server/api/appendices.server";
import { apiFile, methodNotAllowed } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.appendix-file";

export const loader = ({ request, params }: Route.LoaderArgs) =>
  apiFile(request, (p) => appendixFile(p, params.studyId, params.appendixId));
export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
