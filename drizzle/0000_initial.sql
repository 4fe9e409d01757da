CREATE TABLE `analysis_plans` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`name` text NOT NULL,
	`created_by` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`created_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `api_tokens` (
	`id` text PRIMARY KEY NOT NULL,
	`person_id` text NOT NULL,
	`name` text NOT NULL,
	`token_hash` text NOT NULL,
	`prefix` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`expires_at` text NOT NULL,
	`revoked_at` text,
	`last_used_at` text,
	FOREIGN KEY (`person_id`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `api_tokens_token_hash_unique` ON `api_tokens` (`token_hash`);--> statement-breakpoint
CREATE TABLE `appendices` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`plan_version_id` text,
	`rerun_ids_json` text NOT NULL,
	`sha256` text NOT NULL,
	`stored_path` text NOT NULL,
	`byte_size` integer NOT NULL,
	`exported_by` text,
	`exported_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`plan_version_id`) REFERENCES `plan_versions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`exported_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `appendix_narratives` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`plan_version_id` text,
	`section` text NOT NULL,
	`version` integer NOT NULL,
	`body` text NOT NULL,
	`author_id` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`plan_version_id`) REFERENCES `plan_versions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`author_id`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `audit_events` (
	`seq` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`at` text NOT NULL,
	`actor_id` text,
	`actor_name` text NOT NULL,
	`action` text NOT NULL,
	`entity_type` text NOT NULL,
	`entity_id` text,
	`study_id` text,
	`before_json` text,
	`after_json` text,
	`detail` text,
	`prev_hash` text NOT NULL,
	`hash` text NOT NULL
);
--> statement-breakpoint
CREATE INDEX `audit_events_study` ON `audit_events` (`study_id`);--> statement-breakpoint
CREATE INDEX `audit_events_action` ON `audit_events` (`action`);--> statement-breakpoint
CREATE TABLE `dataset_versions` (
	`id` text PRIMARY KEY NOT NULL,
	`dataset_id` text NOT NULL,
	`version` integer NOT NULL,
	`status` text DEFAULT 'draft' NOT NULL,
	`format` text NOT NULL,
	`file_name` text NOT NULL,
	`byte_size` integer NOT NULL,
	`sha256` text NOT NULL,
	`row_count` integer NOT NULL,
	`columns_json` text NOT NULL,
	`key_columns_json` text DEFAULT '[]' NOT NULL,
	`stored_path` text NOT NULL,
	`parsed_path` text,
	`derived_from_id` text,
	`removed_columns_json` text,
	`change_summary_json` text,
	`uploaded_by` text,
	`uploaded_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`locked_by` text,
	`locked_at` text,
	FOREIGN KEY (`dataset_id`) REFERENCES `datasets`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`uploaded_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`locked_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `dataset_versions_dataset_version` ON `dataset_versions` (`dataset_id`,`version`);--> statement-breakpoint
CREATE TABLE `datasets` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`name` text NOT NULL,
	`description` text,
	`created_by` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`created_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `datasets_study_name` ON `datasets` (`study_id`,`name`);--> statement-breakpoint
CREATE TABLE `deviations` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`rerun_id` text,
	`finding_id` text,
	`category` text NOT NULL,
	`impact` text NOT NULL,
	`action` text NOT NULL,
	`rationale` text NOT NULL,
	`recorded_by` text,
	`recorded_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`rerun_id`) REFERENCES `reruns`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`finding_id`) REFERENCES `findings`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`recorded_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `findings` (
	`id` text PRIMARY KEY NOT NULL,
	`rerun_id` text NOT NULL,
	`check_key` text NOT NULL,
	`kind` text DEFAULT 'check' NOT NULL,
	`statistic` text,
	`threshold` text,
	`summary` text NOT NULL,
	`detail_json` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`rerun_id`) REFERENCES `reruns`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `identifier_screen_hits` (
	`id` text PRIMARY KEY NOT NULL,
	`dataset_version_id` text NOT NULL,
	`column` text NOT NULL,
	`rule` text NOT NULL,
	`masked_examples_json` text DEFAULT '[]' NOT NULL,
	`resolution` text,
	`rationale` text,
	`resolved_by` text,
	`resolved_at` text,
	FOREIGN KEY (`dataset_version_id`) REFERENCES `dataset_versions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`resolved_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `jobs` (
	`id` text PRIMARY KEY NOT NULL,
	`kind` text NOT NULL,
	`payload_json` text NOT NULL,
	`status` text DEFAULT 'queued' NOT NULL,
	`attempts` integer DEFAULT 0 NOT NULL,
	`progress` text,
	`error` text,
	`locked_by` text,
	`heartbeat_at` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`finished_at` text
);
--> statement-breakpoint
CREATE INDEX `jobs_status` ON `jobs` (`status`);--> statement-breakpoint
CREATE TABLE `mail_outbox` (
	`id` text PRIMARY KEY NOT NULL,
	`recipient` text NOT NULL,
	`subject` text NOT NULL,
	`text_body` text NOT NULL,
	`html_body` text NOT NULL,
	`status` text DEFAULT 'queued' NOT NULL,
	`attempts` integer DEFAULT 0 NOT NULL,
	`last_error` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`sent_at` text
);
--> statement-breakpoint
CREATE TABLE `people` (
	`id` text PRIMARY KEY NOT NULL,
	`email` text NOT NULL,
	`display_name` text NOT NULL,
	`organisation` text,
	`is_admin` integer DEFAULT false NOT NULL,
	`identity_source` text DEFAULT 'saml' NOT NULL,
	`external_id` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`last_sign_in_at` text
);
--> statement-breakpoint
CREATE UNIQUE INDEX `people_email_unique` ON `people` (`email`);--> statement-breakpoint
CREATE TABLE `plan_versions` (
	`id` text PRIMARY KEY NOT NULL,
	`plan_id` text NOT NULL,
	`version` integer NOT NULL,
	`title` text NOT NULL,
	`sap_name` text,
	`sap_version` text,
	`sap_date` text,
	`status` text DEFAULT 'draft' NOT NULL,
	`revision` integer DEFAULT 1 NOT NULL,
	`author_id` text,
	`approved_by` text,
	`approved_at` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`updated_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`plan_id`) REFERENCES `analysis_plans`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`author_id`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`approved_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `plan_versions_plan_version` ON `plan_versions` (`plan_id`,`version`);--> statement-breakpoint
CREATE TABLE `planned_models` (
	`id` text PRIMARY KEY NOT NULL,
	`plan_version_id` text NOT NULL,
	`key` text NOT NULL,
	`title` text NOT NULL,
	`dataset_name` text NOT NULL,
	`population_json` text,
	`spec_json` text NOT NULL,
	`checks_json` text DEFAULT '[]' NOT NULL,
	`sensitivity_json` text DEFAULT '[]' NOT NULL,
	`position` integer DEFAULT 0 NOT NULL,
	FOREIGN KEY (`plan_version_id`) REFERENCES `plan_versions`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `reruns` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`planned_model_id` text NOT NULL,
	`plan_version_id` text NOT NULL,
	`dataset_version_id` text NOT NULL,
	`kind` text DEFAULT 'primary' NOT NULL,
	`sensitivity_key` text,
	`parent_rerun_id` text,
	`prespecified` integer DEFAULT true NOT NULL,
	`status` text DEFAULT 'queued' NOT NULL,
	`failure_reason` text,
	`dataset_sha256` text NOT NULL,
	`engine_version` text,
	`result_sha256` text,
	`result_json` text,
	`started_by` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`started_at` text,
	`finished_at` text,
	`signed_at` text,
	`published_at` text,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`planned_model_id`) REFERENCES `planned_models`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`plan_version_id`) REFERENCES `plan_versions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`dataset_version_id`) REFERENCES `dataset_versions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`started_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `reruns_study` ON `reruns` (`study_id`);--> statement-breakpoint
CREATE TABLE `saml_requests` (
	`id` text PRIMARY KEY NOT NULL,
	`value` text NOT NULL,
	`created_at` integer NOT NULL
);
--> statement-breakpoint
CREATE TABLE `sessions` (
	`id` text PRIMARY KEY NOT NULL,
	`person_id` text,
	`data_json` text DEFAULT '{}' NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`last_seen_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	`expires_at` text NOT NULL,
	FOREIGN KEY (`person_id`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `signatures` (
	`id` text PRIMARY KEY NOT NULL,
	`rerun_id` text NOT NULL,
	`signer_id` text NOT NULL,
	`signer_name` text NOT NULL,
	`meaning` text NOT NULL,
	`signed_at` text NOT NULL,
	`authenticated_at` text NOT NULL,
	FOREIGN KEY (`rerun_id`) REFERENCES `reruns`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`signer_id`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `studies` (
	`id` text PRIMARY KEY NOT NULL,
	`code` text NOT NULL,
	`title` text NOT NULL,
	`sponsor` text NOT NULL,
	`compound` text,
	`indication` text,
	`phase` text,
	`created_by` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`created_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `studies_code_unique` ON `studies` (`code`);--> statement-breakpoint
CREATE TABLE `study_memberships` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`person_id` text NOT NULL,
	`role` text NOT NULL,
	`granted_by` text,
	`granted_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`person_id`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`granted_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `study_memberships_study_person` ON `study_memberships` (`study_id`,`person_id`);--> statement-breakpoint
CREATE TABLE `study_shares` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`organisation` text NOT NULL,
	`shared_by` text,
	`shared_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ', 'now')) NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`shared_by`) REFERENCES `people`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `study_shares_study_org` ON `study_shares` (`study_id`,`organisation`);