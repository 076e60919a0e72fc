CREATE TABLE `job_files` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`job_id` integer,
	`sha256` text NOT NULL,
	`received_sha256` text NOT NULL,
	`name` text NOT NULL,
	`type` text NOT NULL,
	`bytes` integer NOT NULL,
	`uploaded_by` text NOT NULL,
	`uploaded_at` integer NOT NULL,
	`removed_at` integer,
	`removed_by` text,
	`thumb_sha256` text,
	`analysis` text,
	`snapshot_id` integer,
	FOREIGN KEY (`job_id`) REFERENCES `jobs`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`uploaded_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`removed_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`snapshot_id`) REFERENCES `snapshots`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `job_files_job_idx` ON `job_files` (`job_id`,`uploaded_at`);--> statement-breakpoint
CREATE TABLE `snapshot_audio_blobs` (
	`snapshot_id` integer PRIMARY KEY NOT NULL,
	`sha256` text NOT NULL,
	`bytes` integer NOT NULL,
	FOREIGN KEY (`snapshot_id`) REFERENCES `snapshots`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
-- custom SQL (job_files)
-- Snapshot audio in the blob store is evidence like the snapshot: no UPDATE, no DELETE.
CREATE TRIGGER snapshot_audio_blobs_no_update BEFORE UPDATE ON snapshot_audio_blobs
BEGIN
	SELECT RAISE(ABORT, 'snapshot audio is immutable');
END;
--> statement-breakpoint
CREATE TRIGGER snapshot_audio_blobs_no_delete BEFORE DELETE ON snapshot_audio_blobs
BEGIN
	SELECT RAISE(ABORT, 'snapshot audio is immutable');
END;
--> statement-breakpoint
-- An audio row kept in the database may go only once the same bytes (same hash) are referenced in
-- the blob store: the start-up migration moves them there, then frees the database of them.
DROP TRIGGER snapshot_audio_no_delete;
--> statement-breakpoint
CREATE TRIGGER snapshot_audio_no_delete BEFORE DELETE ON snapshot_audio
WHEN NOT EXISTS (
	SELECT 1 FROM snapshot_audio_blobs b WHERE b.snapshot_id = old.snapshot_id AND b.sha256 = old.sha256
)
BEGIN
	SELECT RAISE(ABORT, 'snapshot audio is immutable');
END;
--> statement-breakpoint
-- A job file is never deleted; removal is a mark (removed_at, removed_by).
CREATE TRIGGER job_files_no_delete BEFORE DELETE ON job_files
BEGIN
	SELECT RAISE(ABORT, 'job files are kept; mark them removed instead');
END;
