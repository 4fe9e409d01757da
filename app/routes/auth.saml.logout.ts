import type { Route } from "./+types/auth.saml.logout";
import { handleSamlLogout } from "~/.server/auth/sign-in.server";

/** Single logout: the identity provider's answer to our logout request, or its own logout request. */
export async function loader({ request }: Route.LoaderArgs) {
  return handleSamlLogout(request);
}

export async function action({ request }: Route.ActionArgs) {
  return handleSamlLogout(request);
}
