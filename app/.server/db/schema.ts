/**
 * The whole product's data model. drizzle-kit generates the SQL migrations in `drizzle/` from
 * this file (`npm run db:generate`); never edit a generated migration by hand.
 *
 * Conventions: ids are random text ids; times are ISO 8601 UTC text; JSON documents are text
 * columns named `...Json` holding canonical JSON written by the service that owns the table.
 */
import { sql } from "drizzle-orm";
import { index, integer, sqliteTable, text, uniqueIndex } from "drizzle-orm/sqlite-core";

const now = sql`(strftime('%Y-%m-%dT%H:%M:%fZ', 'now'))`;

export const STUDY_ROLES = ["data_manager", "biostatistician", "medical_writer", "sponsor_reader"] as const;
export type StudyRole = (typeof STUDY_ROLES)[number];

export const people = sqliteTable(
  "people",
  {
    id: text("id").primaryKey(),
    email: text("email").notNull().unique(),
    displayName: text("display_name").notNull(),
    organisation: text("organisation"),
    /** Global administrator flag, taken from the identity provider's group attribute at each sign-in. */
    isAdmin: integer("is_admin", { mode: "boolean" }).notNull().default(false),
    /** Where the person signs in: the staff SAML provider or a sponsor's OpenID Connect provider. */
    identitySource: text("identity_source", { enum: ["saml", "oidc"] })
      .notNull()
      .default("saml"),
    /** The subject at the identity provider (SAML NameID or OpenID Connect `sub`). */
    externalId: text("external_id").notNull(),
    /**
     * The identity provider that vouches for `externalId` (SAML IdP entity id or OpenID Connect
     * issuer). A person is the pair (issuer, subject); null only for accounts made before it was
     * recorded, bound at their next sign-in when the subject matches.
     */
    identityIssuer: text("identity_issuer"),
    createdAt: text("created_at").notNull().default(now),
    lastSignInAt: text("last_sign_in_at"),
  },
  (t) => [uniqueIndex("people_identity").on(t.identityIssuer, t.externalId)],
);

export const sessions = sqliteTable("sessions", {
  id: text("id").primaryKey(),
  personId: text("person_id").references(() => people.id),
  dataJson: text("data_json").notNull().default("{}"),
  createdAt: text("created_at").notNull().default(now),
  lastSeenAt: text("last_seen_at").notNull().default(now),
  expiresAt: text("expires_at").notNull(),
});

/** Outstanding SAML AuthnRequest ids, shared by every app instance, so a replayed response is refused. */
export const samlRequests = sqliteTable("saml_requests", {
  id: text("id").primaryKey(),
  value: text("value").notNull(),
  createdAt: integer("created_at").notNull(),
});

export const studies = sqliteTable("studies", {
  id: text("id").primaryKey(),
  code: text("code").notNull().unique(),
  title: text("title").notNull(),
  sponsor: text("sponsor").notNull(),
  compound: text("compound"),
  indication: text("indication"),
  phase: text("phase"),
  createdBy: text("created_by").references(() => people.id),
  createdAt: text("created_at").notNull().default(now),
});

export const studyMemberships = sqliteTable(
  "study_memberships",
  {
    id: text("id").primaryKey(),
    studyId: text("study_id")
      .notNull()
      .references(() => studies.id),
    personId: text("person_id")
      .notNull()
      .references(() => people.id),
    role: text("role", { enum: STUDY_ROLES }).notNull(),
    grantedBy: text("granted_by").references(() => people.id),
    grantedAt: text("granted_at").notNull().default(now),
  },
  (t) => [uniqueIndex("study_memberships_study_person").on(t.studyId, t.personId)],
);

/** Sponsor organisations a study is shared with; their readers see its published reports. */
export const studyShares = sqliteTable(
  "study_shares",
  {
    id: text("id").primaryKey(),
    studyId: text("study_id")
      .notNull()
      .references(() => studies.id),
    organisation: text("organisation").notNull(),
    sharedBy: text("shared_by").references(() => people.id),
    sharedAt: text("shared_at").notNull().default(now),
  },
  (t) => [uniqueIndex("study_shares_study_org").on(t.studyId, t.organisation)],
);

export const datasets = sqliteTable(
  "datasets",
  {
    id: text("id").primaryKey(),
    studyId: text("study_id")
      .notNull()
      .references(() => studies.id),
    name: text("name").notNull(),
    description: text("description"),
    createdBy: text("created_by").references(() => people.id),
    createdAt: text("created_at").notNull().default(now),
  },
  (t) => [uniqueIndex("datasets_study_name").on(t.studyId, t.name)],
);

export const datasetVersions = sqliteTable(
  "dataset_versions",
  {
    id: text("id").primaryKey(),
    datasetId: text("dataset_id")
      .notNull()
      .references(() => datasets.id),
    version: integer("version").notNull(),
    status: text("status", { enum: ["draft", "locked", "superseded"] })
      .notNull()
      .default("draft"),
    format: text("format", { enum: ["csv", "dataset-json", "xpt"] }).notNull(),
    fileName: text("file_name").notNull(),
    byteSize: integer("byte_size").notNull(),
    sha256: text("sha256").notNull(),
    rowCount: integer("row_count").notNull(),
    /** The dataset label the file declares (Dataset-JSON, XPORT); null for CSV. */
    datasetLabel: text("dataset_label"),
    /** Column metadata and summaries: name, label, type, missing counts, ranges, levels. */
    columnsJson: text("columns_json").notNull(),
    keyColumnsJson: text("key_columns_json").notNull().default("[]"),
    /** Content-addressed locations of the exact bytes and of the parsed columns. */
    storedPath: text("stored_path").notNull(),
    parsedPath: text("parsed_path"),
    /** Set when this version was derived from another by removing identifier columns. */
    derivedFromId: text("derived_from_id"),
    removedColumnsJson: text("removed_columns_json"),
    changeSummaryJson: text("change_summary_json"),
    uploadedBy: text("uploaded_by").references(() => people.id),
    uploadedAt: text("uploaded_at").notNull().default(now),
    lockedBy: text("locked_by").references(() => people.id),
    lockedAt: text("locked_at"),
    /** Set when a superseded, never-locked version's files were purged (the row stays for the record). */
    purgedBy: text("purged_by").references(() => people.id),
    purgedAt: text("purged_at"),
  },
  (t) => [uniqueIndex("dataset_versions_dataset_version").on(t.datasetId, t.version)],
);

export const identifierScreenHits = sqliteTable("identifier_screen_hits", {
  id: text("id").primaryKey(),
  datasetVersionId: text("dataset_version_id")
    .notNull()
    .references(() => datasetVersions.id),
  column: text("column").notNull(),
  rule: text("rule").notNull(),
  maskedExamplesJson: text("masked_examples_json").notNull().default("[]"),
  resolution: text("resolution", { enum: ["removed", "not_identifier"] }),
  rationale: text("rationale"),
  resolvedBy: text("resolved_by").references(() => people.id),
  resolvedAt: text("resolved_at"),
  /** Set when the resolution was carried forward from an earlier version: the hit first resolved. */
  carriedFromId: text("carried_from_id"),
});

export const analysisPlans = sqliteTable("analysis_plans", {
  id: text("id").primaryKey(),
  studyId: text("study_id")
    .notNull()
    .references(() => studies.id),
  name: text("name").notNull(),
  createdBy: text("created_by").references(() => people.id),
  createdAt: text("created_at").notNull().default(now),
});

export const planVersions = sqliteTable(
  "plan_versions",
  {
    id: text("id").primaryKey(),
    planId: text("plan_id")
      .notNull()
      .references(() => analysisPlans.id),
    version: integer("version").notNull(),
    title: text("title").notNull(),
    sapName: text("sap_name"),
    sapVersion: text("sap_version"),
    sapDate: text("sap_date"),
    status: text("status", { enum: ["draft", "awaiting_approval", "approved", "superseded"] })
      .notNull()
      .default("draft"),
    /** Incremented on every save; a save naming an older revision is refused (two editors). */
    revision: integer("revision").notNull().default(1),
    authorId: text("author_id").references(() => people.id),
    /** Everyone who saved a change to this version; none of them may approve it. */
    editorIdsJson: text("editor_ids_json").notNull().default("[]"),
    /** Why the approver sent the version back, if they did. */
    returnNote: text("return_note"),
    approvedBy: text("approved_by").references(() => people.id),
    approvedAt: text("approved_at"),
    createdAt: text("created_at").notNull().default(now),
    updatedAt: text("updated_at").notNull().default(now),
  },
  (t) => [uniqueIndex("plan_versions_plan_version").on(t.planId, t.version)],
);

export const plannedModels = sqliteTable(
  "planned_models",
  {
    id: text("id").primaryKey(),
    planVersionId: text("plan_version_id")
      .notNull()
      .references(() => planVersions.id),
    key: text("key").notNull(),
    title: text("title").notNull(),
    datasetName: text("dataset_name").notNull(),
    populationJson: text("population_json"),
    /** The model specification object, the same JSON the headless rerun command reads. */
    specJson: text("spec_json").notNull(),
    checksJson: text("checks_json").notNull().default("[]"),
    sensitivityJson: text("sensitivity_json").notNull().default("[]"),
    position: integer("position").notNull().default(0),
  },
  // the approved models of a study are read through their plan version (the reruns page)
  (t) => [index("planned_models_plan_version").on(t.planVersionId)],
);

export const reruns = sqliteTable(
  "reruns",
  {
    id: text("id").primaryKey(),
    studyId: text("study_id")
      .notNull()
      .references(() => studies.id),
    plannedModelId: text("planned_model_id")
      .notNull()
      .references(() => plannedModels.id),
    planVersionId: text("plan_version_id")
      .notNull()
      .references(() => planVersions.id),
    datasetVersionId: text("dataset_version_id")
      .notNull()
      .references(() => datasetVersions.id),
    kind: text("kind", { enum: ["primary", "sensitivity"] })
      .notNull()
      .default("primary"),
    sensitivityKey: text("sensitivity_key"),
    parentRerunId: text("parent_rerun_id"),
    prespecified: integer("prespecified", { mode: "boolean" }).notNull().default(true),
    /** How a sensitivity rerun differs from its primary: remedy, excluded rows, covariate set. */
    optionsJson: text("options_json").notNull().default("{}"),
    label: text("label"),
    status: text("status", { enum: ["queued", "running", "completed", "failed"] })
      .notNull()
      .default("queued"),
    failureReason: text("failure_reason"),
    datasetSha256: text("dataset_sha256").notNull(),
    engineVersion: text("engine_version"),
    resultSha256: text("result_sha256"),
    resultJson: text("result_json"),
    startedBy: text("started_by").references(() => people.id),
    createdAt: text("created_at").notNull().default(now),
    startedAt: text("started_at"),
    finishedAt: text("finished_at"),
    signedAt: text("signed_at"),
    publishedAt: text("published_at"),
  },
  (t) => [index("reruns_study").on(t.studyId)],
);

export const findings = sqliteTable(
  "findings",
  {
    id: text("id").primaryKey(),
    rerunId: text("rerun_id")
      .notNull()
      .references(() => reruns.id),
    checkKey: text("check_key").notNull(),
    kind: text("kind", { enum: ["check", "not_estimable"] })
      .notNull()
      .default("check"),
    statistic: text("statistic"),
    threshold: text("threshold"),
    summary: text("summary").notNull(),
    detailJson: text("detail_json"),
    createdAt: text("created_at").notNull().default(now),
  },
  // rerun lists count each rerun's findings and the results page reads them, by rerun
  (t) => [index("findings_rerun").on(t.rerunId)],
);

export const deviations = sqliteTable("deviations", {
  id: text("id").primaryKey(),
  studyId: text("study_id")
    .notNull()
    .references(() => studies.id),
  rerunId: text("rerun_id").references(() => reruns.id),
  findingId: text("finding_id").references(() => findings.id),
  category: text("category", { enum: ["model_assumption", "data", "specification"] }).notNull(),
  impact: text("impact", { enum: ["none", "minor", "changes_conclusion"] }).notNull(),
  action: text("action").notNull(),
  rationale: text("rationale").notNull(),
  recordedBy: text("recorded_by").references(() => people.id),
  recordedAt: text("recorded_at").notNull().default(now),
});

/** Electronic signature records: who signed, when, what the signature means. */
export const signatures = sqliteTable("signatures", {
  id: text("id").primaryKey(),
  rerunId: text("rerun_id")
    .notNull()
    .references(() => reruns.id),
  signerId: text("signer_id")
    .notNull()
    .references(() => people.id),
  signerName: text("signer_name").notNull(),
  meaning: text("meaning").notNull(),
  signedAt: text("signed_at").notNull(),
  authenticatedAt: text("authenticated_at").notNull(),
});

export const appendices = sqliteTable("appendices", {
  id: text("id").primaryKey(),
  studyId: text("study_id")
    .notNull()
    .references(() => studies.id),
  planVersionId: text("plan_version_id").references(() => planVersions.id),
  rerunIdsJson: text("rerun_ids_json").notNull(),
  sha256: text("sha256").notNull(),
  storedPath: text("stored_path").notNull(),
  byteSize: integer("byte_size").notNull(),
  exportedBy: text("exported_by").references(() => people.id),
  exportedAt: text("exported_at").notNull().default(now),
});

export const appendixNarratives = sqliteTable("appendix_narratives", {
  id: text("id").primaryKey(),
  studyId: text("study_id")
    .notNull()
    .references(() => studies.id),
  planVersionId: text("plan_version_id").references(() => planVersions.id),
  section: text("section").notNull(),
  version: integer("version").notNull(),
  body: text("body").notNull(),
  authorId: text("author_id").references(() => people.id),
  createdAt: text("created_at").notNull().default(now),
});

/**
 * The audit trail. Append-only (database triggers refuse UPDATE and DELETE) and hash-chained:
 * `hash` = SHA-256 of `prevHash` and the event's canonical content.
 */
export const auditEvents = sqliteTable(
  "audit_events",
  {
    seq: integer("seq").primaryKey({ autoIncrement: true }),
    at: text("at").notNull(),
    actorId: text("actor_id"),
    actorName: text("actor_name").notNull(),
    action: text("action").notNull(),
    entityType: text("entity_type").notNull(),
    entityId: text("entity_id"),
    studyId: text("study_id"),
    beforeJson: text("before_json"),
    afterJson: text("after_json"),
    detail: text("detail"),
    prevHash: text("prev_hash").notNull(),
    hash: text("hash").notNull(),
    /** HMAC-SHA256 with the audit key (kept outside the database) over the previous event's mac and this hash: see audit.server.ts. */
    mac: text("mac"),
  },
  (t) => [index("audit_events_study").on(t.studyId), index("audit_events_action").on(t.action)],
);

export const apiTokens = sqliteTable("api_tokens", {
  id: text("id").primaryKey(),
  personId: text("person_id")
    .notNull()
    .references(() => people.id),
  name: text("name").notNull(),
  /** SHA-256 of the token; the token itself is shown once and never stored. */
  tokenHash: text("token_hash").notNull().unique(),
  prefix: text("prefix").notNull(),
  createdAt: text("created_at").notNull().default(now),
  expiresAt: text("expires_at").notNull(),
  revokedAt: text("revoked_at"),
  lastUsedAt: text("last_used_at"),
});

export const jobs = sqliteTable(
  "jobs",
  {
    id: text("id").primaryKey(),
    kind: text("kind").notNull(),
    payloadJson: text("payload_json").notNull(),
    status: text("status", { enum: ["queued", "running", "done", "failed"] })
      .notNull()
      .default("queued"),
    attempts: integer("attempts").notNull().default(0),
    progress: text("progress"),
    error: text("error"),
    lockedBy: text("locked_by"),
    heartbeatAt: text("heartbeat_at"),
    createdAt: text("created_at").notNull().default(now),
    finishedAt: text("finished_at"),
  },
  (t) => [index("jobs_status").on(t.status)],
);

/**
 * E-mail notifications, one row per recipient, written in the same transaction as the event they
 * announce and sent by a background job. A message that could not be sent stays queued with its
 * error and `nextAttemptAt`; it is tried again then, and ends as failed after the last try.
 */
export const mailOutbox = sqliteTable(
  "mail_outbox",
  {
    id: text("id").primaryKey(),
    recipient: text("recipient").notNull(),
    subject: text("subject").notNull(),
    textBody: text("text_body").notNull(),
    htmlBody: text("html_body").notNull(),
    status: text("status", { enum: ["queued", "sent", "failed"] })
      .notNull()
      .default("queued"),
    attempts: integer("attempts").notNull().default(0),
    lastError: text("last_error"),
    createdAt: text("created_at").notNull().default(now),
    sentAt: text("sent_at"),
    /** Which notification this is (plan_awaits_approval, rerun_awaits_signoff, report_published, appendix_exported). */
    kind: text("kind"),
    studyId: text("study_id").references(() => studies.id),
    /** The page the message links back to (a path under APP_URL). */
    linkPath: text("link_path"),
    lastAttemptAt: text("last_attempt_at"),
    /** When a queued message is tried again; while its send job waits, a lease after which a lost job is replaced. */
    nextAttemptAt: text("next_attempt_at"),
  },
  (t) => [index("mail_outbox_status").on(t.status, t.nextAttemptAt)],
);
