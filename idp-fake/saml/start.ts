/**
 * Starts the fake staff identity provider from the command line and keeps it running:
 *   tsx idp-fake/saml/start.ts --port 7000 --app-url http://localhost:5180 --state-dir data/idp
 * Optional: --host, --issuer (default urn:plumbline:idp-fake), --audience (default urn:plumbline:sp).
 */
import { parseArgs } from "node:util";
import { startSamlIdp } from "./launch";

const { values } = parseArgs({
  options: {
    port: { type: "string", default: "7000" },
    host: { type: "string", default: "127.0.0.1" },
    "app-url": { type: "string", default: "http://localhost:5180" },
    "state-dir": { type: "string", default: "data/idp" },
    issuer: { type: "string", default: process.env.SAML_IDP_ISSUER ?? "urn:plumbline:idp-fake" },
    audience: { type: "string", default: process.env.SAML_SP_ISSUER ?? "urn:plumbline:sp" },
  },
});

const appUrl = values["app-url"].replace(/\/+$/, "");
const idp = await startSamlIdp({
  port: Number(values.port),
  host: values.host,
  acsUrl: `${appUrl}/auth/saml/acs`,
  sloUrl: `${appUrl}/auth/saml/logout`,
  audience: values.audience,
  issuer: values.issuer,
  stateDir: values["state-dir"],
});

console.log(`Fake SAML identity provider ready at ${idp.baseUrl}`);
console.log(`  SAML_IDP_SSO_URL=${idp.ssoUrl}`);
console.log(`  SAML_IDP_SLO_URL=${idp.sloUrl}`);
console.log(`  SAML_IDP_ISSUER=${values.issuer}`);
console.log(`  SAML_IDP_CERT_FILE=${idp.certFile}`);

let stopping = false;
const stop = (): void => {
  if (stopping) return;
  stopping = true;
  void idp.stop().then(() => process.exit(0));
};
process.on("SIGINT", stop);
process.on("SIGTERM", stop);
