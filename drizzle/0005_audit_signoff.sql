CREATE TABLE `audit_log` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`at` integer DEFAULT (unixepoch('subsec') * 1000) NOT NULL,
	`actor_id` text,
	`action` text NOT NULL,
	`job_id` integer,
	`subject` text NOT NULL,
	`detail` text,
	FOREIGN KEY (`actor_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `audit_log_at_idx` ON `audit_log` (`at`);--> statement-breakpoint
CREATE INDEX `audit_log_job_idx` ON `audit_log` (`job_id`,`at`);--> statement-breakpoint
CREATE INDEX `audit_log_actor_idx` ON `audit_log` (`actor_id`,`at`);--> statement-breakpoint
CREATE INDEX `audit_log_action_idx` ON `audit_log` (`action`,`at`);--> statement-breakpoint
CREATE TABLE `sign_off_supersessions` (
	`sign_off_id` integer PRIMARY KEY NOT NULL,
	`superseded_at` integer NOT NULL,
	`superseded_by` text NOT NULL,
	`reason` text NOT NULL,
	FOREIGN KEY (`sign_off_id`) REFERENCES `sign_offs`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`superseded_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `sign_offs` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer NOT NULL,
	`signer_id` text NOT NULL,
	`signer_name` text NOT NULL,
	`signer_role` text NOT NULL,
	`decision` text NOT NULL,
	`meaning` text NOT NULL,
	`comment` text NOT NULL,
	`signed_at` integer NOT NULL,
	`requirements` text NOT NULL,
	`self_sign_off` integer DEFAULT false NOT NULL,
	`covered` text NOT NULL,
	`sha256` text NOT NULL,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`signer_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `sign_offs_job_idx` ON `sign_offs` (`job_id`,`signed_at`);--> statement-breakpoint
-- The audit trail is append-only, and a signature is evidence: neither may change once written.
-- A reopening marks a sign-off superseded with a row of its own, which is just as permanent.
CREATE TRIGGER audit_log_no_update BEFORE UPDATE ON audit_log
BEGIN
	SELECT RAISE(ABORT, 'the audit trail is append-only');
END;
--> statement-breakpoint
CREATE TRIGGER audit_log_no_delete BEFORE DELETE ON audit_log
BEGIN
	SELECT RAISE(ABORT, 'the audit trail is append-only');
END;
--> statement-breakpoint
CREATE TRIGGER sign_offs_no_update BEFORE UPDATE ON sign_offs
BEGIN
	SELECT RAISE(ABORT, 'sign-offs are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER sign_offs_no_delete BEFORE DELETE ON sign_offs
BEGIN
	SELECT RAISE(ABORT, 'sign-offs are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER sign_off_supersessions_no_update BEFORE UPDATE ON sign_off_supersessions
BEGIN
	SELECT RAISE(ABORT, 'sign-off supersessions are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER sign_off_supersessions_no_delete BEFORE DELETE ON sign_off_supersessions
BEGIN
	SELECT RAISE(ABORT, 'sign-off supersessions are immutable');
END;
