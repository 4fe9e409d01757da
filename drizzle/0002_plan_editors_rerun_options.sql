ALTER TABLE `plan_versions` ADD `editor_ids_json` text DEFAULT '[]' NOT NULL;--> statement-breakpoint
ALTER TABLE `plan_versions` ADD `return_note` text;--> statement-breakpoint
ALTER TABLE `reruns` ADD `options_json` text DEFAULT '{}' NOT NULL;--> statement-breakpoint
ALTER TABLE `reruns` ADD `label` text;