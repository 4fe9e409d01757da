import type { Route } from "./+types/auth.oidc.callback";
import { finishOidcSignIn } from "~/.server/auth/oidc-sign-in.server";

/** The sponsor's provider sends the browser back here with an authorization code. */
export async function loader({ request }: Route.LoaderArgs) {
  return finishOidcSignIn(request);
}
