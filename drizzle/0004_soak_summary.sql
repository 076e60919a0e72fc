CREATE TABLE `soak_series` (
	`run_id` integer NOT NULL,
	`probe` text NOT NULL,
	`bucket` integer NOT NULL,
	`n` integer NOT NULL,
	`sum_c` real NOT NULL,
	`min_c` real NOT NULL,
	`max_c` real NOT NULL,
	PRIMARY KEY(`run_id`, `probe`, `bucket`),
	FOREIGN KEY (`run_id`) REFERENCES `soak_runs`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
ALTER TABLE `soak_runs` ADD `summary_state` text;--> statement-breakpoint
CREATE INDEX `soak_readings_run_t_idx` ON `soak_readings` (`run_id`,`t`);--> statement-breakpoint
-- Backfill: the downsampled chart of every stored run, bucketed exactly as $lib/soak/series does
-- (660 buckets over the planned duration, clamped to indices 0…719).
INSERT INTO `soak_series` (`run_id`, `probe`, `bucket`, `n`, `sum_c`, `min_c`, `max_c`)
SELECT r.`run_id`, r.`probe`,
	min(719, max(0, (r.`t` - s.`started_at`) / max(1, cast((s.`duration_s` * 1000.0 / s.`time_scale` / 660) as integer) + ((s.`duration_s` * 1000.0 / s.`time_scale` / 660) > cast((s.`duration_s` * 1000.0 / s.`time_scale` / 660) as integer))))) AS b,
	count(*), sum(r.`celsius`), min(r.`celsius`), max(r.`celsius`)
FROM `soak_readings` r JOIN `soak_runs` s ON s.`id` = r.`run_id`
GROUP BY r.`run_id`, r.`probe`, b;--> statement-breakpoint
-- Backfill: reading count and last seq of every ended run (its summary is already stored); a
-- running run's state is rebuilt from its readings once, by the server, on its next use.
UPDATE `soak_runs` SET `summary_state` = json_object(
	'readingCount', (SELECT count(*) FROM `soak_readings` r WHERE r.`run_id` = `soak_runs`.`id`),
	'lastSeq', (SELECT max(r.`seq`) FROM `soak_readings` r WHERE r.`run_id` = `soak_runs`.`id`)
) WHERE `status` != 'running';
