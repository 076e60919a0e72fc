CREATE TABLE `job_model_keys` (
	`job_id` integer PRIMARY KEY NOT NULL,
	`model_key` text NOT NULL,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE INDEX `job_model_keys_key_idx` ON `job_model_keys` (`model_key`,`job_id`);--> statement-breakpoint
CREATE TABLE `model_note_versions` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`model_key` text NOT NULL,
	`version` integer NOT NULL,
	`text` text NOT NULL,
	`saved_by` text,
	`saved_at` integer NOT NULL,
	FOREIGN KEY (`saved_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `model_note_versions_key_idx` ON `model_note_versions` (`model_key`,`version`);--> statement-breakpoint
CREATE TABLE `model_notes` (
	`model_key` text PRIMARY KEY NOT NULL,
	`make` text NOT NULL,
	`model` text NOT NULL,
	`text` text NOT NULL,
	`version` integer NOT NULL,
	`updated_by` text,
	`updated_at` integer DEFAULT (unixepoch('subsec') * 1000) NOT NULL,
	FOREIGN KEY (`updated_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
ALTER TABLE `job_files` ADD `model_key` text;--> statement-breakpoint
CREATE INDEX `job_files_model_idx` ON `job_files` (`model_key`,`uploaded_at`);--> statement-breakpoint
-- custom SQL (notebook)
-- A saved version of a model's notes is the record of who wrote what and when: it never changes.
CREATE TRIGGER model_note_versions_no_update BEFORE UPDATE ON model_note_versions
BEGIN
	SELECT RAISE(ABORT, 'model note versions are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER model_note_versions_no_delete BEFORE DELETE ON model_note_versions
BEGIN
	SELECT RAISE(ABORT, 'model note versions are immutable');
END;
--> statement-breakpoint
-- An edited make or model makes the job's key stale: drop it, and the notebook service keys the job again.
CREATE TRIGGER jobs_model_key_stale AFTER UPDATE OF make, model ON jobs
WHEN OLD.make IS NOT NEW.make OR OLD.model IS NOT NEW.model
BEGIN
	DELETE FROM job_model_keys WHERE job_id = NEW.id;
END;
