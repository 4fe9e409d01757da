/**
 * Starts the stack the app and browser tests talk to: the fake SAML identity provider, the SMTP
 * fake and the built Plumbline server on free loopback ports, with a fresh database and data
 * folder in a temporary directory, seeded with the demo study. Stops them afterwards.
 */
import { existsSync, mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { TestProject } from "vitest/node";
import { startSamlIdp } from "../../idp-fake/saml/launch";
import { startOidcFake } from "../../idp-fake/oidc/launch";
import { startSmtpFake } from "../../idp-fake/smtp/launch";
import { freePort, startAppServer } from "../../scripts/lib/app-server";

export interface Stack {
  appUrl: string;
  idpUrl: string;
  /** The fake sponsor OpenID Connect provider (OIDC_ISSUER). */
  oidcUrl: string;
  dbFile: string;
  dataDir: string;
  sessionSecret: string;
  /** The SMTP fake's state folder: read received messages with idp-fake/smtp/inbox.ts. */
  smtpStateDir: string;
}

declare module "vitest" {
  export interface ProvidedContext {
    stack: Stack;
  }
}

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const root = process.cwd();
  if (!existsSync(path.join(root, "build/server/index.js"))) {
    throw new Error(
      "The app tests need the built server: run `npm run build` first (npm run test:all does).",
    );
  }
  const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-test-"));
  const [appPort, idpPort] = [await freePort(), await freePort()];
  const oidcPort = await freePort();
  const appUrl = `http://127.0.0.1:${appPort}`;
  const idp = await startSamlIdp({
    port: idpPort,
    acsUrl: `${appUrl}/auth/saml/acs`,
    sloUrl: `${appUrl}/auth/saml/logout`,
    audience: "urn:plumbline:sp",
    issuer: "urn:plumbline:idp-fake",
    stateDir: path.join(dir, "idp"),
  });
  const oidc = await startOidcFake({ port: oidcPort, stateDir: path.join(dir, "oidc"), appUrl });
  const smtpStateDir = path.join(dir, "smtp");
  const smtp = await startSmtpFake({ port: 0, stateDir: smtpStateDir });
  const dbFile = path.join(dir, "plumbline.db");
  const sessionSecret = "test-session-secret-0123456789abcdef";
  const env: Record<string, string> = {
    APP_URL: appUrl,
    DATA_DIR: path.join(dir, "data"),
    DATABASE_URL: `file:${dbFile}`,
    SESSION_SECRET: sessionSecret,
    SAML_IDP_SSO_URL: idp.ssoUrl,
    SAML_IDP_SLO_URL: idp.sloUrl,
    SAML_IDP_ISSUER: "urn:plumbline:idp-fake",
    SAML_IDP_CERT_FILE: idp.certFile,
    SAML_SP_ISSUER: "urn:plumbline:sp",
    OIDC_ISSUER: oidc.issuerUrl,
    OIDC_CLIENT_ID: oidc.clientId,
    OIDC_CLIENT_SECRET: oidc.clientSecret,
    SMTP_HOST: smtp.smtpHost,
    SMTP_PORT: String(smtp.smtpPort),
    SMTP_FAKE_INBOX_DIR: smtp.inboxDir,
  };
  Object.assign(process.env, env);
  const { seedDemoStudy } = await import("../../app/.server/demo/seed.server");
  await seedDemoStudy();
  const app = await startAppServer({ port: appPort, env });
  project.provide("stack", {
    appUrl,
    idpUrl: idp.baseUrl,
    oidcUrl: oidc.issuerUrl,
    dbFile,
    dataDir: env.DATA_DIR,
    sessionSecret,
    smtpStateDir,
  });
  return async () => {
    await Promise.allSettled([app.stop(), idp.stop(), oidc.stop(), smtp.stop()]);
    rmSync(dir, { recursive: true, force: true });
  };
}
