CREATE TABLE `checkout_sessions` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer NOT NULL,
	`purpose` text NOT NULL,
	`estimate_id` integer,
	`provider_session_id` text NOT NULL,
	`url` text NOT NULL,
	`amount_minor` integer NOT NULL,
	`currency` text NOT NULL,
	`status` text DEFAULT 'open' NOT NULL,
	`created_at` integer DEFAULT (unixepoch('subsec') * 1000) NOT NULL,
	`closed_at` integer,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`estimate_id`) REFERENCES `estimates`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `checkout_sessions_provider_session_id_unique` ON `checkout_sessions` (`provider_session_id`);--> statement-breakpoint
CREATE INDEX `checkout_sessions_job_idx` ON `checkout_sessions` (`job_id`);--> statement-breakpoint
CREATE TABLE `estimate_decisions` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`estimate_id` integer NOT NULL,
	`link_id` integer,
	`decision` text NOT NULL,
	`typed_name` text NOT NULL,
	`reason` text,
	`seen_sha256` text NOT NULL,
	`decided_at` integer NOT NULL,
	FOREIGN KEY (`estimate_id`) REFERENCES `estimates`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`link_id`) REFERENCES `customer_links`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `estimate_decisions_estimate_id_unique` ON `estimate_decisions` (`estimate_id`);--> statement-breakpoint
CREATE TABLE `estimates` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer NOT NULL,
	`version` integer NOT NULL,
	`status` text DEFAULT 'draft' NOT NULL,
	`lines` text NOT NULL,
	`note` text,
	`pricing` text,
	`seen_json` text,
	`seen_sha256` text,
	`created_by` text NOT NULL,
	`created_at` integer DEFAULT (unixepoch('subsec') * 1000) NOT NULL,
	`updated_at` integer DEFAULT (unixepoch('subsec') * 1000) NOT NULL,
	`sent_by` text,
	`sent_at` integer,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`sent_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `estimates_job_version_idx` ON `estimates` (`job_id`,`version`);--> statement-breakpoint
CREATE TABLE `invoices` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer NOT NULL,
	`number` text NOT NULL,
	`estimate_id` integer NOT NULL,
	`document_json` text NOT NULL,
	`issued_by` text NOT NULL,
	`issued_at` integer NOT NULL,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`estimate_id`) REFERENCES `estimates`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`issued_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `invoices_job_id_unique` ON `invoices` (`job_id`);--> statement-breakpoint
CREATE UNIQUE INDEX `invoices_number_unique` ON `invoices` (`number`);--> statement-breakpoint
CREATE TABLE `payment_events` (
	`event_id` text PRIMARY KEY NOT NULL,
	`type` text NOT NULL,
	`outcome` text NOT NULL,
	`received_at` integer NOT NULL
);
--> statement-breakpoint
CREATE TABLE `payments` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer NOT NULL,
	`kind` text NOT NULL,
	`method` text NOT NULL,
	`amount_minor` integer NOT NULL,
	`currency` text NOT NULL,
	`reference` text,
	`checkout_session_id` integer,
	`provider_event_id` text,
	`recorded_by` text,
	`received_at` integer NOT NULL,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`checkout_session_id`) REFERENCES `checkout_sessions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`recorded_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `payments_provider_event_id_unique` ON `payments` (`provider_event_id`);--> statement-breakpoint
CREATE INDEX `payments_job_idx` ON `payments` (`job_id`);--> statement-breakpoint
-- custom SQL (estimate_approval): what was sent, decided, paid or invoiced never changes.
CREATE TRIGGER `estimates_frozen_after_send` BEFORE UPDATE ON `estimates`
WHEN OLD.status <> 'draft' AND (NEW.lines IS NOT OLD.lines OR NEW.pricing IS NOT OLD.pricing OR NEW.seen_json IS NOT OLD.seen_json OR NEW.seen_sha256 IS NOT OLD.seen_sha256 OR NEW.note IS NOT OLD.note OR NEW.version IS NOT OLD.version OR NEW.job_id IS NOT OLD.job_id)
BEGIN SELECT RAISE(ABORT, 'a sent estimate cannot be changed; draft a revision instead'); END;
--> statement-breakpoint
CREATE TRIGGER `estimates_no_delete_after_send` BEFORE DELETE ON `estimates`
WHEN OLD.status <> 'draft' AND (SELECT COUNT(*) FROM jobs WHERE id = OLD.job_id) > 0
BEGIN SELECT RAISE(ABORT, 'a sent estimate cannot be deleted'); END;
--> statement-breakpoint
CREATE TRIGGER `estimate_decisions_immutable` BEFORE UPDATE ON `estimate_decisions`
BEGIN SELECT RAISE(ABORT, 'a customer decision cannot be changed'); END;
--> statement-breakpoint
CREATE TRIGGER `payments_immutable` BEFORE UPDATE ON `payments`
BEGIN SELECT RAISE(ABORT, 'a recorded payment cannot be changed; record a refund instead'); END;
--> statement-breakpoint
CREATE TRIGGER `invoices_immutable` BEFORE UPDATE ON `invoices`
BEGIN SELECT RAISE(ABORT, 'an issued invoice cannot be changed'); END;
