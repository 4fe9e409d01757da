CREATE INDEX `findings_rerun` ON `findings` (`rerun_id`);--> statement-breakpoint
CREATE INDEX `planned_models_plan_version` ON `planned_models` (`plan_version_id`);