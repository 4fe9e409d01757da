/** A missing identity-provider certificate: sign-in cannot start, and the page says so instead of failing. */
import path from "node:path";
import { expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

const { dir } = useTempDatabase();
Object.assign(process.env, {
  APP_URL: "http://127.0.0.1:5996",
  SAML_IDP_CERT_FILE: path.join(dir, "no-such-cert.pem"),
});
const { finishSamlSignIn, signInPage } = await import("../../app/.server/auth/sign-in.server");
const { REFUSAL_MESSAGES } = await import("../../app/.server/auth/refusal.server");
const { listAuditEvents } = await import("../../app/.server/audit.server");

it("a response cannot be checked without the certificate: refused as misconfigured, with an audit event", async () => {
  const response = await finishSamlSignIn(
    new Request("http://127.0.0.1:5996/auth/saml/acs", {
      method: "POST",
      headers: { "Content-Type": "application/x-www-form-urlencoded" },
      body: "SAMLResponse=PHg%2BPC94Pg%3D%3D",
    }),
  );
  expect(response.headers.get("Location")).toBe("/sign-in?error=misconfigured");
  const [event] = await listAuditEvents({ action: "auth.sign_in_refused", limit: 1 });
  expect(event.detail).toMatch(/^misconfigured: .*SAML_IDP_CERT_FILE/);
  const page = await signInPage(new Request("http://127.0.0.1:5996/sign-in?error=misconfigured"));
  expect(page).toMatchObject({
    signedIn: false,
    error: { code: "misconfigured", message: REFUSAL_MESSAGES.misconfigured },
  });
});
