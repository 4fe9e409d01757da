import type { Route } from "./+types/auth.oidc.login";
import { startOidcSignIn } from "~/.server/auth/oidc-sign-in.server";

/** Sends a sponsor reader to their organisation's OpenID Connect provider. */
export async function loader({ request }: Route.LoaderArgs) {
  return startOidcSignIn(request);
}
