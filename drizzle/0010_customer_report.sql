CREATE TABLE `customer_link_views` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`link_id` integer NOT NULL,
	`viewed_at` integer NOT NULL,
	FOREIGN KEY (`link_id`) REFERENCES `customer_links`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE INDEX `customer_link_views_link_idx` ON `customer_link_views` (`link_id`);--> statement-breakpoint
CREATE TABLE `customer_links` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer NOT NULL,
	`purpose` text NOT NULL,
	`token_sha256` text NOT NULL,
	`created_by` text NOT NULL,
	`created_at` integer DEFAULT (unixepoch('subsec') * 1000) NOT NULL,
	`expires_at` integer NOT NULL,
	`revoked_at` integer,
	`revoked_by` text,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`created_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`revoked_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `customer_links_token_sha256_unique` ON `customer_links` (`token_sha256`);--> statement-breakpoint
CREATE INDEX `customer_links_job_idx` ON `customer_links` (`job_id`);--> statement-breakpoint
ALTER TABLE `work_log` ADD `for_customer` integer DEFAULT false NOT NULL;