/**
 * The two node-saml instances of the service provider, built from the configuration:
 * one for sign-in (responses answer a request we made, so InResponseTo is required) and one
 * for single logout (the identity provider may start a logout itself, so InResponseTo is
 * checked only when present).
 */
import { readFileSync } from "node:fs";
import { SAML, ValidateInResponseTo, type SamlConfig } from "@node-saml/node-saml";
import { config } from "../config.server";
import { DatabaseCacheProvider } from "./saml-cache.server";

/** How long a sign-in started here may take to come back from the identity provider. */
export const REQUEST_ID_LIFETIME_MS = 15 * 60 * 1000;
export const NAME_ID_FORMAT = "urn:oasis:names:tc:SAML:1.1:nameid-format:emailAddress";

export interface SamlSetup {
  signIn: SAML;
  /** Sign-in that asks the identity provider to authenticate again (ForceAuthn), before a signature. */
  freshSignIn: SAML;
  logout: SAML;
  cache: DatabaseCacheProvider;
  /** PEM of the identity provider's signing certificate, the only one trusted. */
  trustedCert: string;
  idpIssuer: string;
  adminGroup: string;
}

/** Single sign-on cannot work with these settings; the message says which to fix. */
export class SamlSetupError extends Error {
  override name = "SamlSetupError";
}

function readTrustedCert(file: string): string {
  try {
    return readFileSync(file, "utf8");
  } catch {
    throw new SamlSetupError(
      `Plumbline cannot read the identity provider's signing certificate at ${file}: set SAML_IDP_CERT_FILE to the PEM file your identity provider publishes.`,
    );
  }
}

export function createSamlSetup(): SamlSetup {
  const trustedCert = readTrustedCert(config.SAML_IDP_CERT_FILE);
  const cache = new DatabaseCacheProvider(REQUEST_ID_LIFETIME_MS);
  const app = config.APP_URL.replace(/\/+$/, "");
  const common: SamlConfig = {
    idpCert: trustedCert,
    issuer: config.SAML_SP_ISSUER,
    audience: config.SAML_SP_ISSUER,
    callbackUrl: `${app}/auth/saml/acs`,
    entryPoint: config.SAML_IDP_SSO_URL,
    logoutUrl: config.SAML_IDP_SLO_URL,
    logoutCallbackUrl: `${app}/auth/saml/logout`,
    identifierFormat: NAME_ID_FORMAT,
    wantAuthnResponseSigned: true,
    wantAssertionsSigned: true,
    acceptedClockSkewMs: config.SAML_CLOCK_SKEW_MS,
    requestIdExpirationPeriodMs: REQUEST_ID_LIFETIME_MS,
    cacheProvider: cache,
    disableRequestedAuthnContext: true,
  };
  return {
    signIn: new SAML({ ...common, validateInResponseTo: ValidateInResponseTo.always }),
    freshSignIn: new SAML({ ...common, validateInResponseTo: ValidateInResponseTo.always, forceAuthn: true }),
    logout: new SAML({ ...common, validateInResponseTo: ValidateInResponseTo.ifPresent }),
    cache,
    trustedCert,
    idpIssuer: config.SAML_IDP_ISSUER,
    adminGroup: config.SAML_ADMIN_GROUP,
  };
}

let current: SamlSetup | null = null;

/** Built on first use, so a missing certificate is reported when someone signs in, not at import. */
export function samlSetup(): SamlSetup {
  current ??= createSamlSetup();
  return current;
}
