// Database files are private to the account that runs Benchlight (they hold customers' contact
// details and password hashes): owner-only file modes, checked with fs.stat on real files.
import { afterAll, describe, expect, it } from 'vitest';
import { chmodSync, mkdirSync, mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openDb } from './open';

const dir = mkdtempSync(join(tmpdir(), 'benchlight-open-test-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Permission bits only (rwx for owner, group, others). */
const mode = (path: string) => statSync(path).mode & 0o777;

describe('openDb file permissions', () => {
	it('creates the database, its -wal and -shm files 0600 and its new folders 0700', () => {
		const path = join(dir, 'fresh', 'nested', 'bench.db');
		const db = openDb(path);
		db.$client.prepare('CREATE TABLE t (x)').run();
		db.$client.prepare('INSERT INTO t VALUES (1)').run();
		// WAL mode: the write-ahead log and shared-memory index exist while the database is open.
		expect(mode(path)).toBe(0o600);
		expect(mode(`${path}-wal`)).toBe(0o600);
		expect(mode(`${path}-shm`)).toBe(0o600);
		expect(mode(join(dir, 'fresh'))).toBe(0o700);
		expect(mode(join(dir, 'fresh', 'nested'))).toBe(0o700);
		db.$client.close();
	});

	it('leaves an existing folder as it is', () => {
		const shared = join(dir, 'shared');
		mkdirSync(shared);
		chmodSync(shared, 0o755);
		const db = openDb(join(shared, 'bench.db'));
		expect(mode(shared)).toBe(0o755);
		expect(mode(join(shared, 'bench.db'))).toBe(0o600);
		db.$client.close();
	});
});
