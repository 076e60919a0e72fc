// The backup script's copy-and-verify step on real files.
import { afterAll, describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openDb } from '../src/lib/server/db/open';
import { backupDatabase } from './backup';
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

	it('refuses a missing source', async () => {
		await expect(backupDatabase(join(dir, 'nope.db'), join(dir, 'x.db'))).rejects.toThrow(/No database/);
	});
});
