CREATE TABLE `procedure_runs` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer NOT NULL,
	`kind` text NOT NULL,
	`label` text NOT NULL,
	`input` text NOT NULL,
	`result` text NOT NULL,
	`verdict` text NOT NULL,
	`created_by` text NOT NULL,
	`created_at` integer DEFAULT (unixepoch('subsec') * 1000) NOT NULL,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `procedure_runs_job_idx` ON `procedure_runs` (`job_id`,`created_at`);--> statement-breakpoint
-- custom SQL (procedures): a recorded procedure is evidence, like a snapshot.
CREATE TRIGGER procedure_runs_no_update BEFORE UPDATE ON procedure_runs
BEGIN
	SELECT RAISE(ABORT, 'procedure runs are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER procedure_runs_no_delete BEFORE DELETE ON procedure_runs
BEGIN
	SELECT RAISE(ABORT, 'procedure runs are immutable');
END;
