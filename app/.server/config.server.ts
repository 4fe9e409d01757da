import { z } from "zod";

/**
 * Every setting Plumbline reads from the environment, validated once at start-up.
 * The README's "Configuration" section lists the same variables; keep the two in step.
 */
const schema = z.object({
  NODE_ENV: z.enum(["development", "production", "test"]).default("production"),
  /** Public URL people use to reach the app; used for SAML URLs, cookie security and links in e-mail. */
  APP_URL: z.url().default("http://localhost:5180"),
  /** `file:./data/plumbline.db` (embedded) or any libSQL server URL such as `http://db-host:8080`. */
  DATABASE_URL: z.string().min(1).default("file:./data/plumbline.db"),
  DATABASE_AUTH_TOKEN: z.string().optional(),
  /** Folder of migrations made by drizzle-kit. */
  MIGRATIONS_DIR: z.string().default("./drizzle"),
  /** Folder for stored files (locked dataset bytes, appendices). */
  DATA_DIR: z.string().default("./data"),
  /** Key of the audit trail's keyed hashes (HMAC), at least 32 characters; kept outside the database. Overrides AUDIT_KEY_FILE. */
  AUDIT_KEY: z.string().min(32, "the audit key needs at least 32 characters").optional(),
  /** File holding the audit key; created (with a random key) when missing. Default: DATA_DIR/keys/audit-hmac.key. */
  AUDIT_KEY_FILE: z.string().min(1).optional(),
  /** Secret that signs the session cookie; at least 32 characters outside local development. */
  SESSION_SECRET: z.string().min(16).default("plumbline-local-development-secret"),
  /** SAML identity provider: single sign-on URL, single logout URL, issuer and signing certificate (PEM file). */
  SAML_IDP_SSO_URL: z.url().default("http://127.0.0.1:7000/saml/sso"),
  SAML_IDP_SLO_URL: z.url().default("http://127.0.0.1:7000/saml/slo"),
  SAML_IDP_ISSUER: z.string().default("urn:plumbline:idp-fake"),
  SAML_IDP_CERT_FILE: z.string().default("./data/idp/idp-public-cert.pem"),
  /** Our entity id as the service provider (the audience of every assertion). */
  SAML_SP_ISSUER: z.string().default("urn:plumbline:sp"),
  /** Allowed clock difference with the identity provider, in milliseconds. */
  SAML_CLOCK_SKEW_MS: z.coerce.number().int().min(0).max(60_000).default(5_000),
  /** Identity-provider group whose members are Plumbline administrators. */
  SAML_ADMIN_GROUP: z.string().min(1).default("plumbline-admins"),
  /** Sponsor readers' OpenID Connect provider: its issuer (discovery at /.well-known/openid-configuration) and our client there. */
  OIDC_ISSUER: z.url().default("http://127.0.0.1:7100"),
  OIDC_CLIENT_ID: z.string().min(1).default("plumbline"),
  OIDC_CLIENT_SECRET: z.string().min(1).default("plumbline-demo-oidc-secret"),
  /** Largest request body accepted outside dataset uploads, in bytes. */
  MAX_BODY_BYTES: z.coerce.number().int().positive().default(1_048_576),
  /** Largest dataset file accepted by the upload route, in bytes (default 200 MB). */
  DATASET_MAX_BYTES: z.coerce.number().int().positive().default(200_000_000),
  /** Most columns a dataset file may have; wider files are refused before they are read. */
  DATASET_MAX_COLUMNS: z.coerce.number().int().positive().default(2_000),
  /** Largest header line of a CSV dataset file, in bytes (default 1 MiB). */
  DATASET_MAX_HEADER_BYTES: z.coerce.number().int().positive().default(1_048_576),
  /** SMTP server that e-mail notifications go through (no authentication; STARTTLS when the server offers it). */
  SMTP_HOST: z.string().min(1).default("127.0.0.1"),
  SMTP_PORT: z.coerce.number().int().min(1).max(65_535).default(2525),
  /** Sender of every notification. */
  MAIL_FROM: z.string().min(3).default("Plumbline <no-reply@plumbline.example>"),
  /** Demo and tests only: the SMTP fake's inbox folder, shown on the administrator's outbox page. */
  SMTP_FAKE_INBOX_DIR: z.string().optional(),
});

export type Config = z.infer<typeof schema>;

function load(): Config {
  const parsed = schema.safeParse(process.env);
  if (!parsed.success) {
    const problems = parsed.error.issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("; ");
    throw new Error(`Plumbline cannot start: fix these settings in the environment: ${problems}`);
  }
  return parsed.data;
}

export const config: Config = load();

/** Cookies get `Secure` and responses get HSTS whenever the app is served over HTTPS. */
export const servedOverHttps = new URL(config.APP_URL).protocol === "https:";
