import { redirect } from "react-router";
import type { Route } from "./+types/auth.saml.acs";
import { finishSamlSignIn } from "~/.server/auth/sign-in.server";

/** The assertion consumer service: the identity provider posts its signed response here. */
export async function action({ request }: Route.ActionArgs) {
  return finishSamlSignIn(request);
}

export function loader() {
  return redirect("/sign-in");
}
