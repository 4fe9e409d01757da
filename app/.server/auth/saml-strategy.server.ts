/**
 * SAML 2.0 single sign-on as a remix-auth strategy, on top of @node-saml/node-saml.
 *
 * A GET starts the sign-in: it throws a redirect to the identity provider carrying a new
 * AuthnRequest (its id is kept in the shared request table). A POST is the identity
 * provider's answer at our assertion consumer service: the response and its assertion must
 * both be signed with the trusted certificate, answer a request we made and have not yet seen,
 * be within their validity period (allowing the configured clock skew), name us as the
 * audience and come from the configured issuer (node-saml leaves the issuer to us).
 * Every failure is a `SignInRefused` naming the reason.
 */
import { getVerifiedXml, parseDomFromString, xpath } from "@node-saml/node-saml/lib/xml";
import type { Profile, SAML } from "@node-saml/node-saml";
import { redirect } from "react-router";
import { Strategy } from "remix-auth/strategy";
import { codeForValidationError, SignInRefused } from "./refusal.server";
import { withClaims } from "./saml-cache.server";

export interface SamlStrategyOptions {
  saml: SAML;
  /** Same settings with ForceAuthn: the identity provider must authenticate the person anew. */
  freshSaml?: SAML;
  trustedCert: string;
  idpIssuer: string;
}

export interface SamlVerifyParams {
  profile: Profile;
  /** RelayState as it came back (unverified: treat as a hint, e.g. a return path). */
  relayState: string | null;
  /** The id of our request this response answered (checked: we made it and it was outstanding). */
  requestId: string;
  request: Request;
}

/** The response's InResponseTo and NameID, read before anything is verified (for the record only). */
interface Peek {
  doc: Document | null;
  inResponseTo: string | null;
  nameId: string | null;
  responseIssuer: string | null;
}

async function peek(xml: string): Promise<Peek> {
  try {
    const doc = await parseDomFromString(xml);
    const irt =
      xpath.selectAttributes(doc, "/*[local-name()='Response']/@InResponseTo")[0]?.nodeValue ?? null;
    const nameId =
      xpath.selectElements(doc, "//*[local-name()='Subject']/*[local-name()='NameID']")[0]?.textContent ??
      null;
    const issuer =
      xpath.selectElements(doc, "/*[local-name()='Response']/*[local-name()='Issuer']")[0]?.textContent ??
      null;
    return {
      doc,
      inResponseTo: irt?.slice(0, 200) ?? null,
      nameId: nameId?.trim().slice(0, 200) || null,
      responseIssuer: issuer?.trim() ?? null,
    };
  } catch {
    return { doc: null, inResponseTo: null, nameId: null, responseIssuer: null };
  }
}

const pemOf = (base64: string): string =>
  `-----BEGIN CERTIFICATE-----\n${base64
    .replace(/\s+/g, "")
    .replace(/(.{64})/g, "$1\n")
    .replace(/\n$/, "")}\n-----END CERTIFICATE-----\n`;

const certBody = (pem: string): string => pem.replace(/-----[^-]+-----/g, "").replace(/\s+/g, "");

/**
 * A signature that fails against the trusted certificate either covers altered content
 * (tampered) or is intact but made with another key (foreign-signed). It is foreign-signed
 * when the certificate embedded in the signature is not ours and does verify the signed element.
 */
function signedWithForeignKey(xml: string, doc: Document, trustedCert: string): boolean {
  const signed = [
    doc.documentElement,
    ...xpath.selectElements(doc, "/*[local-name()='Response']/*[local-name()='Assertion']"),
  ];
  for (const element of signed) {
    const certs = xpath.selectElements(
      element,
      "./*[local-name()='Signature']//*[local-name()='X509Certificate']",
    );
    const embedded = certs[0]?.textContent;
    if (!embedded || certBody(embedded) === certBody(trustedCert)) continue;
    try {
      if (getVerifiedXml(xml, element, [pemOf(embedded)])) return true;
    } catch {
      // a malformed signature is not evidence of a foreign key
    }
  }
  return false;
}

export class SamlStrategy<User> extends Strategy<User, SamlVerifyParams> {
  name = "saml";

  constructor(
    private readonly options: SamlStrategyOptions,
    verify: Strategy.VerifyFunction<User, SamlVerifyParams>,
  ) {
    super(verify);
  }

  /** Starts a sign-in (GET: throws a redirect) or finishes one (POST from the identity provider). */
  async authenticate(request: Request): Promise<User> {
    if (request.method === "GET" || request.method === "HEAD") {
      const url = new URL(request.url);
      const relayState = url.searchParams.get("returnTo") ?? "/";
      const saml =
        url.searchParams.get("fresh") === "1" && this.options.freshSaml
          ? this.options.freshSaml
          : this.options.saml;
      throw redirect(await saml.getAuthorizeUrlAsync(relayState, url.host, {}));
    }
    const form = await request.formData();
    const samlResponse = form.get("SAMLResponse");
    const relayState = form.get("RelayState");
    if (typeof samlResponse !== "string" || samlResponse.length === 0) {
      throw new SignInRefused("other", "the request carried no SAMLResponse");
    }
    const { profile, requestId } = await this.validate(samlResponse);
    return this.verify({
      profile,
      requestId,
      relayState: typeof relayState === "string" ? relayState : null,
      request,
    });
  }

  private async validate(samlResponse: string): Promise<{ profile: Profile; requestId: string }> {
    const xml = Buffer.from(samlResponse, "base64").toString("utf8");
    const seen = await peek(xml);
    const refuse = (code: ConstructorParameters<typeof SignInRefused>[0], reason: string): SignInRefused =>
      new SignInRefused(code, reason, seen.nameId, seen.inResponseTo);

    let outcome: Awaited<
      ReturnType<typeof withClaims<Awaited<ReturnType<SAML["validatePostResponseAsync"]>>>>
    >;
    try {
      outcome = await withClaims(() =>
        this.options.saml.validatePostResponseAsync({ SAMLResponse: samlResponse }),
      );
    } catch (error) {
      const message = error instanceof Error ? error.message : String(error);
      const code = codeForValidationError(message);
      if (code !== "signature") throw refuse(code, message);
      const foreign = seen.doc !== null && signedWithForeignKey(xml, seen.doc, this.options.trustedCert);
      throw refuse(
        foreign ? "foreign-signed" : "tampered",
        foreign ? `${message} (signed by an untrusted key)` : message,
      );
    }
    const profile = outcome.result.profile;
    if (!profile) throw refuse("other", "the response held no assertion");
    if (!seen.inResponseTo || !outcome.claimed.has(seen.inResponseTo)) {
      throw refuse("replayed", "another copy of this response was accepted first");
    }
    // The response is signed as a whole (checked above), so its own Issuer is the signed one.
    for (const issuer of [profile.issuer, seen.responseIssuer ?? profile.issuer]) {
      if (issuer !== this.options.idpIssuer) {
        throw refuse(
          "wrong-issuer",
          `issuer ${JSON.stringify(issuer)}, expected ${JSON.stringify(this.options.idpIssuer)}`,
        );
      }
    }
    return { profile, requestId: seen.inResponseTo };
  }
}
