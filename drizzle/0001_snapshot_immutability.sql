-- Snapshots are evidence: once stored, neither the results nor the raw audio may change.
CREATE TRIGGER snapshots_no_update BEFORE UPDATE ON snapshots
BEGIN
	SELECT RAISE(ABORT, 'snapshots are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER snapshots_no_delete BEFORE DELETE ON snapshots
BEGIN
	SELECT RAISE(ABORT, 'snapshots are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER snapshot_audio_no_update BEFORE UPDATE ON snapshot_audio
BEGIN
	SELECT RAISE(ABORT, 'snapshot audio is immutable');
END;
--> statement-breakpoint
CREATE TRIGGER snapshot_audio_no_delete BEFORE DELETE ON snapshot_audio
BEGIN
	SELECT RAISE(ABORT, 'snapshot audio is immutable');
END;
