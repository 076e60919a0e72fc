CREATE TABLE `job_worksheet_versions` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer NOT NULL,
	`kind` text NOT NULL,
	`version` integer NOT NULL,
	`data` text NOT NULL,
	`saved_by` text,
	`saved_at` integer NOT NULL,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`saved_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `job_worksheet_versions_job_idx` ON `job_worksheet_versions` (`job_id`,`kind`,`version`);--> statement-breakpoint
CREATE TABLE `job_worksheets` (
	`job_id` integer NOT NULL,
	`kind` text NOT NULL,
	`data` text NOT NULL,
	`version` integer NOT NULL,
	`updated_by` text,
	`updated_at` integer DEFAULT (unixepoch('subsec') * 1000) NOT NULL,
	PRIMARY KEY(`job_id`, `kind`),
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`updated_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
-- custom SQL (worksheets)
-- A saved worksheet version is the record of who wrote what and when: it never changes.
CREATE TRIGGER job_worksheet_versions_no_update BEFORE UPDATE ON job_worksheet_versions
BEGIN
	SELECT RAISE(ABORT, 'worksheet versions are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER job_worksheet_versions_no_delete BEFORE DELETE ON job_worksheet_versions
BEGIN
	SELECT RAISE(ABORT, 'worksheet versions are immutable');
END;
