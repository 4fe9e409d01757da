ALTER TABLE `dataset_versions` ADD `purged_by` text REFERENCES people(id);--> statement-breakpoint
ALTER TABLE `dataset_versions` ADD `purged_at` text;--> statement-breakpoint
ALTER TABLE `identifier_screen_hits` ADD `carried_from_id` text;