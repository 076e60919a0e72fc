// The backup script's copy-and-verify step on real files.
import { afterAll, describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openDb } from '../src/lib/server/db/open';
import { backupDatabase, backupStore, referencedBlobs } from './backup';
import { blobStoreFor, storeRootFor } from '../src/lib/server/storage';
import * as table from '../src/lib/server/db/schema';
import { writeFileSync } from 'node:fs';
import { seedDemo } from './seed';

const dir = mkdtempSync(join(tmpdir(), 'benchlight-backup-test-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('backup', () => {
	it('copies a live database and verifies the copy', async () => {
		const src = join(dir, 'live.db');
		const db = openDb(src);
		await seedDemo(db);
		// The app keeps its handle open during a backup.
		const result = await backupDatabase(src, join(dir, 'copy', 'b.db'));
		expect(result).toMatchObject({ integrity: ['ok'], foreignKeyProblems: 0, ok: true });
		const copy = new Database(result.path, { readonly: true });
		expect((copy.prepare('SELECT count(*) AS n FROM jobs').get() as { n: number }).n).toBe(
			(db.$client.prepare('SELECT count(*) AS n FROM jobs').get() as { n: number }).n
		);
		copy.close();
		db.$client.close();
	});

	it('reports a copy with broken references as failed', async () => {
		const src = join(dir, 'broken.db');
		const db = openDb(src);
		db.$client.pragma('foreign_keys = OFF');
		db.$client
			.prepare(
				"INSERT INTO jobs (customer_id, category, make, model, complaint) VALUES (999, 'tuner', 'X', 'Y', 'Z')"
			)
			.run();
		db.$client.close();
		const result = await backupDatabase(src, join(dir, 'broken-copy.db'));
		expect(result.ok).toBe(false);
		expect(result.foreignKeyProblems).toBe(1);
	});

	it('writes the copy readable by its owner only, in an owner-only new folder', async () => {
		const src = join(dir, 'private.db');
		const db = openDb(src);
		const result = await backupDatabase(src, join(dir, 'private-backups', 'b.db'));
		db.$client.close();
		expect(result.ok).toBe(true);
		// Permission bits only: rw for the owner, nothing for group or others.
		expect(statSync(result.path).mode & 0o777).toBe(0o600);
		expect(statSync(join(dir, 'private-backups')).mode & 0o777).toBe(0o700);
	});

	it('copies the blobs the database refers to into the store beside the copy, verified, and reports damage', async () => {
		const src = join(dir, 'with-files', 'live.db');
		const db = openDb(src);
		await seedDemo(db);
		const store = blobStoreFor(src);
		// The demo seed's own files and snapshot audio are in the store already.
		const seeded = referencedBlobs(src).length;
		const one = await store.put(Buffer.from('service manual, page 1'));
		const two = await store.put(Buffer.from('photo of the main board'));
		const jobId = db.select().from(table.jobs).get()!.id;
		const userId = db.select().from(table.users).get()!.id;
		const file = (sha256: string, name: string) =>
			db
				.insert(table.jobFiles)
				.values({
					jobId,
					sha256,
					receivedSha256: sha256,
					name,
					type: 'pdf',
					bytes: 1,
					uploadedBy: userId,
					uploadedAt: new Date()
				})
				.run();
		file(one.sha256, 'a.pdf');
		file(two.sha256, 'b.pdf');
		// The demo seed's snapshots keep their audio in the store: it is among what is backed up.
		const audio = (
			db.$client.prepare('select count(distinct sha256) as n from snapshot_audio_blobs').get() as {
				n: number;
			}
		).n;
		expect(audio).toBeGreaterThan(0);
		expect(seeded).toBeGreaterThanOrEqual(audio);
		const copy = await backupDatabase(src, join(dir, 'file-backups', 'b1.db'));
		const result = await backupStore(copy.path, storeRootFor(src));
		expect(result).toMatchObject({ referenced: seeded + 2, copied: seeded + 2, problems: [], ok: true });
		expect(result.storeRoot).toBe(join(dir, 'file-backups', 'store'));
		// A second backup in the same folder shares the blobs (verified again, not copied again).
		const again = await backupStore(
			(await backupDatabase(src, join(dir, 'file-backups', 'b2.db'))).path,
			storeRootFor(src)
		);
		expect(again).toMatchObject({ referenced: seeded + 2, copied: 0, ok: true });
		// A blob damaged in the live store fails a fresh backup.
		writeFileSync(store.pathOf(one.sha256), 'not the manual');
		const bad = await backupStore(
			(await backupDatabase(src, join(dir, 'other-backups', 'b.db'))).path,
			storeRootFor(src)
		);
		expect(bad.ok).toBe(false);
		expect(bad.problems).toEqual([one.sha256]);
		db.$client.close();
	});

	it('refuses a missing source', async () => {
		await expect(backupDatabase(join(dir, 'nope.db'), join(dir, 'x.db'))).rejects.toThrow(/No database/);
	});
});
