ALTER TABLE `soak_runs` ADD `time_scale` real DEFAULT 1 NOT NULL;--> statement-breakpoint
ALTER TABLE `soak_runs` ADD `start_seq` integer;