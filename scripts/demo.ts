/**
 * `npm run demo`: starts Plumbline with its demo study on this machine, with the embedded
 * SQLite database and the local fake identity provider, and prints where to go and who to be.
 * Stop it with Ctrl-C.
 */
import { mkdirSync } from "node:fs";
import path from "node:path";
import { startOidcFake } from "../idp-fake/oidc/launch";
import { startSamlIdp } from "../idp-fake/saml/launch";
import { startSmtpFake } from "../idp-fake/smtp/launch";
import { startAppServer } from "./lib/app-server";

const APP_PORT = Number(process.env.PORT ?? 5180);
const IDP_PORT = Number(process.env.SAML_IDP_PORT ?? 7000);
const OIDC_PORT = Number(process.env.OIDC_FAKE_PORT ?? 7100);
const APP_URL = process.env.APP_URL ?? `http://localhost:${APP_PORT}`;
const DATA_DIR = path.resolve(process.env.DATA_DIR ?? "data");
const SP_ISSUER = process.env.SAML_SP_ISSUER ?? "urn:plumbline:sp";
const IDP_ISSUER = process.env.SAML_IDP_ISSUER ?? "urn:plumbline:idp-fake";
const SMTP_PORT = Number(process.env.SMTP_PORT ?? 2525);

mkdirSync(DATA_DIR, { recursive: true });

const idp = await startSamlIdp({
  port: IDP_PORT,
  acsUrl: `${APP_URL}/auth/saml/acs`,
  sloUrl: `${APP_URL}/auth/saml/logout`,
  audience: SP_ISSUER,
  issuer: IDP_ISSUER,
  stateDir: path.join(DATA_DIR, "idp"),
});
const oidc = await startOidcFake({ port: OIDC_PORT, stateDir: path.join(DATA_DIR, "oidc"), appUrl: APP_URL });
const smtp = await startSmtpFake({ port: SMTP_PORT, stateDir: path.join(DATA_DIR, "smtp") });

/**
 * The browser reaches the fake identity provider by the app's host name (it listens on
 * 127.0.0.1): over plain HTTP the cookie that binds a sign-in to its browser is SameSite=Lax, so
 * the provider's POST back must come from the same site as APP_URL (localhost and 127.0.0.1 are
 * different sites).
 */
const onAppSite = (url: string): string => {
  const u = new URL(url);
  u.hostname = new URL(APP_URL).hostname;
  return u.toString();
};

const env: Record<string, string> = {
  APP_URL,
  DATA_DIR,
  DATABASE_URL: process.env.DATABASE_URL ?? `file:${path.join(DATA_DIR, "plumbline.db")}`,
  SAML_IDP_SSO_URL: onAppSite(idp.ssoUrl),
  SAML_IDP_SLO_URL: onAppSite(idp.sloUrl),
  SAML_IDP_ISSUER: IDP_ISSUER,
  SAML_IDP_CERT_FILE: idp.certFile,
  SAML_SP_ISSUER: SP_ISSUER,
  OIDC_ISSUER: oidc.issuerUrl,
  OIDC_CLIENT_ID: oidc.clientId,
  OIDC_CLIENT_SECRET: oidc.clientSecret,
  SMTP_HOST: smtp.smtpHost,
  SMTP_PORT: String(smtp.smtpPort),
  SMTP_FAKE_INBOX_DIR: smtp.inboxDir,
};
Object.assign(process.env, env);

// The seed imports the database module, which reads the settings above when it loads.
const { seedDemoStudy, readDemoPeople } = await import("../app/.server/demo/seed.server");
const outcome = await seedDemoStudy();

const app = await startAppServer({ port: APP_PORT, host: "127.0.0.1", env, output: "inherit" });

const people = readDemoPeople();
console.log(`
Plumbline is running at ${APP_URL}
  Demo study: ${outcome.seeded ? "seeded" : `kept as it was (${outcome.reason})`}
  Database:   ${env.DATABASE_URL}
  Audit key:  ${process.env.AUDIT_KEY ? "from AUDIT_KEY" : path.resolve(process.env.AUDIT_KEY_FILE ?? path.join(DATA_DIR, "keys", "audit-hmac.key"))} (keys the audit trail's hashes; keep a copy)
  Sign-in:    the fake identity provider at ${onAppSite(idp.baseUrl)} lets you choose a demo person:
${people.map((p) => `    ${p.displayName.padEnd(18)} ${(p.studyRole ?? (p.groups.includes("plumbline-admins") ? "administrator" : "no study role")).padEnd(16)} ${p.email}${p.signIn === "oidc" ? "  (Sponsor sign-in)" : ""}`).join("\n")}
  Sponsors:   "Sponsor sign-in" goes to the fake OpenID Connect provider at ${oidc.issuerUrl}; the
              study is shared with Quillmoor Therapeutics, not with Harrowgate Biologics.
  E-mail:     notifications go to the SMTP fake at ${smtp.smtpHost}:${smtp.smtpPort}; the administrator's
              outbox page (${APP_URL}/admin/outbox) shows what it received.
Press Ctrl-C to stop.`);

let stopping = false;
async function stop(): Promise<void> {
  if (stopping) return;
  stopping = true;
  await Promise.allSettled([app.stop(), idp.stop(), oidc.stop(), smtp.stop()]);
  process.exit(0);
}
process.on("SIGINT", () => void stop());
process.on("SIGTERM", () => void stop());
app.process.on("exit", (code) => {
  if (!stopping) {
    console.error(`The Plumbline server stopped unexpectedly (exit code ${code}).`);
    void stop();
  }
});
