ALTER TABLE `mail_outbox` ADD `kind` text;--> statement-breakpoint
ALTER TABLE `mail_outbox` ADD `study_id` text REFERENCES studies(id);--> statement-breakpoint
ALTER TABLE `mail_outbox` ADD `link_path` text;--> statement-breakpoint
ALTER TABLE `mail_outbox` ADD `last_attempt_at` text;--> statement-breakpoint
ALTER TABLE `mail_outbox` ADD `next_attempt_at` text;--> statement-breakpoint
CREATE INDEX `mail_outbox_status` ON `mail_outbox` (`status`,`next_attempt_at`);