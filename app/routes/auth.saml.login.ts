import type { Route } from "./+types/auth.saml.login";
import { startSamlSignIn } from "~/.server/auth/sign-in.server";

/** Sends the browser to the staff identity provider with a new sign-in request. */
export async function loader({ request }: Route.LoaderArgs) {
  return startSamlSignIn(request);
}
