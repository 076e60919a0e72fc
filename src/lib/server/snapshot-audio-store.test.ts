// Snapshot audio in the blob store: a database that still holds audio in `snapshot_audio` has it
// moved on open, verified, without losing a capture, and idempotently; a capture on a database
// file goes through the pool's worker into the store beside it; reads check the hash.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { BlobCorruptError, blobStoreFor, sha256Hex, storeRootFor } from './storage';
import { migrateSnapshotAudio } from './snapshot-store';
import { createSnapshotInPool, getSnapshot, getSnapshotAudio } from './snapshots';
import { AnalysisPool } from './analysis-pool';
import { wav16 } from './file-fixtures';

const dir = mkdtempSync(join(tmpdir(), 'audio-store-test-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function seed(db: Db): number {
	db.insert(table.users)
		.values({ id: 'u1', email: 't@example.com', name: 'Tess Bench', role: 'technician', passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'C' }).returning().get();
	return db
		.insert(table.jobs)
		.values({ customerId: c.id, category: 'receiver', make: 'Vellum', model: 'R-2', complaint: 'hum' })
		.returning()
		.get().id;
}

/** A snapshot row as an older version wrote it, with its audio in the database. */
function legacySnapshot(db: Db, jobId: number, wav: Buffer, sha256 = sha256Hex(wav)): number {
	const s = db
		.insert(table.snapshots)
		.values({
			jobId,
			createdBy: 'u1',
			label: 'old capture',
			stage: 'before',
			sampleRateHz: 48_000,
			channelCount: 2,
			sampleCount: 1000,
			fullScaleVolts: 1,
			results: { channels: [] },
			verdict: 'none',
			checks: [],
			spectrum: { fftSize: 8192, window: 'hann', channels: [] }
		})
		.returning()
		.get();
	db.insert(table.snapshotAudio).values({ snapshotId: s.id, sha256, wav }).run();
	return s.id;
}

const count = (db: Db, t: string) =>
	(db.$client.prepare(`select count(*) as n from ${t}`).get() as { n: number }).n;

describe('moving snapshot audio into the store', () => {
	it('moves every capture on open, verified; leaves a mismatched one; runs again harmlessly', async () => {
		const file = join(dir, 'legacy.db');
		let db = openDb(file);
		const jobId = seed(db);
		const a = wav16(0.1, 48_000, 1000);
		const b = wav16(0.1, 48_000, 440);
		const idA = legacySnapshot(db, jobId, a);
		const idB = legacySnapshot(db, jobId, b);
		// Damaged before the move: its bytes no longer match its recorded hash.
		const idBad = legacySnapshot(db, jobId, Buffer.from('damaged'), sha256Hex(Buffer.from('original')));
		db.$client.close();

		db = openDb(file); // the move runs here
		expect(count(db, 'snapshot_audio')).toBe(1);
		expect(count(db, 'snapshot_audio_blobs')).toBe(2);
		const gotA = (await getSnapshotAudio(db, idA))!;
		expect(gotA.wav.equals(a)).toBe(true);
		expect(gotA.sha256).toBe(sha256Hex(a));
		expect((await getSnapshotAudio(db, idB))!.wav.equals(b)).toBe(true);
		expect(getSnapshot(db, idA)!.audioSha256).toBe(sha256Hex(a));
		// The damaged one stays in the database, reported, never silently "fixed".
		expect(migrateSnapshotAudio(db.$client, storeRootFor(file))).toEqual({ moved: 0, mismatched: [idBad] });
		expect(getSnapshot(db, idBad)!.audioSha256).toBe(sha256Hex(Buffer.from('original')));

		// The store refuses a blob damaged on disk rather than hand out other bytes.
		writeFileSync(blobStoreFor(file).pathOf(sha256Hex(b)), 'tampered');
		await expect(getSnapshotAudio(db, idB)).rejects.toBeInstanceOf(BlobCorruptError);
		db.$client.close();
	});

	it('a crash between storing the blob and recording it loses nothing: the next open finishes', () => {
		const file = join(dir, 'crash.db');
		const db = openDb(file);
		const jobId = seed(db);
		const a = wav16(0.05);
		const id = legacySnapshot(db, jobId, a);
		// As if the process stopped after the blob was written: the database still has the audio.
		blobStoreFor(file).putSync(a);
		expect(count(db, 'snapshot_audio')).toBe(1);
		// The database refuses to drop audio that is not referenced in the store.
		expect(() => db.$client.prepare('delete from snapshot_audio where snapshot_id = ?').run(id)).toThrow(
			/immutable/
		);
		expect(migrateSnapshotAudio(db.$client, storeRootFor(file))).toEqual({ moved: 1, mismatched: [] });
		expect(count(db, 'snapshot_audio')).toBe(0);
		db.$client.close();
	});

	it('a capture on a database file is written by the pool worker into the store beside it', async () => {
		const file = join(dir, 'live.db');
		const db = openDb(file);
		const jobId = seed(db);
		const pool = new AnalysisPool({ threads: 1 });
		const wav = wav16(0.5, 48_000, 1000, 0.5);
		const created = await createSnapshotInPool(
			db,
			{ jobId, userId: 'u1', wav: new Uint8Array(wav), meta: { label: 'bench', stage: 'before' } },
			pool.reserve()
		);
		await pool.close();
		expect(count(db, 'snapshot_audio')).toBe(0);
		const ref = db.select().from(table.snapshotAudioBlobs).get()!;
		expect(ref).toEqual({ snapshotId: created.id, sha256: sha256Hex(wav), bytes: wav.length });
		expect(await blobStoreFor(file).has(ref.sha256)).toBe(true);
		expect(storeRootFor(file)).toBe(join(dir, 'store'));
		db.$client.close();
	});
});
