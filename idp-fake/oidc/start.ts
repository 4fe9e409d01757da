/**
 * Starts the fake sponsor OpenID Connect provider from the command line and keeps it running:
 *   tsx idp-fake/oidc/start.ts --port 7100 --app-url http://localhost:5180 --state-dir data/oidc
 * Optional: --host, --client-id (default plumbline), --client-secret.
 */
import { parseArgs } from "node:util";
import { DEMO_CLIENT_ID, DEMO_CLIENT_SECRET, startOidcFake } from "./launch";

const { values } = parseArgs({
  options: {
    port: { type: "string", default: "7100" },
    host: { type: "string", default: "127.0.0.1" },
    "app-url": { type: "string", default: "http://localhost:5180" },
    "state-dir": { type: "string", default: "data/oidc" },
    "client-id": { type: "string", default: process.env.OIDC_CLIENT_ID ?? DEMO_CLIENT_ID },
    "client-secret": { type: "string", default: process.env.OIDC_CLIENT_SECRET ?? DEMO_CLIENT_SECRET },
  },
});

const fake = await startOidcFake({
  port: Number(values.port),
  host: values.host,
  stateDir: values["state-dir"],
  appUrl: values["app-url"],
  clientId: values["client-id"],
  clientSecret: values["client-secret"],
});

console.log(`Fake OpenID Connect provider ready at ${fake.issuerUrl}`);
console.log(`  OIDC_ISSUER=${fake.issuerUrl}`);
console.log(`  OIDC_CLIENT_ID=${fake.clientId}`);
console.log(`  OIDC_CLIENT_SECRET=${fake.clientSecret}`);

let stopping = false;
const stop = (): void => {
  if (stopping) return;
  stopping = true;
  void fake.stop().then(() => process.exit(0));
};
process.on("SIGINT", stop);
process.on("SIGTERM", stop);
