import { notFound } from "~/.server/api/respond.server";
import type { Route } from "./+types/api.v1.not-found";

/** Any other path under /api/v1 answers JSON, not the HTML not-found page. */
export const loader = ({ request }: Route.LoaderArgs) => notFound(request);
export const action = ({ request }: Route.ActionArgs) => notFound(request);
