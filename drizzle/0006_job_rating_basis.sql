ALTER TABLE `jobs` ADD `rated_power_basis` text;--> statement-breakpoint
ALTER TABLE `jobs` ADD `rated_thd_percent` real;--> statement-breakpoint
ALTER TABLE `jobs` ADD `unrestored` integer DEFAULT false NOT NULL;