import { openApiDocument } from "~/.server/api/openapi";
import { methodNotAllowed } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.openapi";

/** The OpenAPI 3.1 document: public, it describes the API and holds no study data. */
export function loader(_: Route.LoaderArgs) {
  return new Response(JSON.stringify(openApiDocument()), {
    headers: { "Content-Type": "application/json; charset=utf-8", "Cache-Control": "public, max-age=300" },
  });
}

export const action = ({ request }: Route.ActionArgs) => methodNotAllowed(request);
