import { redirect } from "react-router";
import type { Route } from "./+types/sign-out";
import { signOut } from "~/.server/auth/sign-in.server";

/** Ends the Plumbline session, then single logout at the identity provider where it works. */
export async function action({ request }: Route.ActionArgs) {
  return signOut(request);
}

export function loader() {
  return redirect("/");
}
