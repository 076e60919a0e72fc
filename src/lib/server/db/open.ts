// Opens a Benchlight SQLite database with the durability settings every process uses
// (app, scripts, tests) and applies the committed migrations.
import Database from 'better-sqlite3';
import { drizzle, type BetterSQLite3Database } from 'drizzle-orm/better-sqlite3';
import { migrate } from 'drizzle-orm/better-sqlite3/migrator';
import { closeSync, existsSync, mkdirSync, openSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import * as schema from './schema';
import { migrateSnapshotAudio } from '../snapshot-store';
import { storeRootFor } from '../storage';
import { syncModelKeys } from '../model-keys';

export type Db = BetterSQLite3Database<typeof schema> & { $client: Database.Database };

/** drizzle/ at the repository root, found from this file so scripts need not run from the root. */
export function migrationsFolder(): string {
	if (process.env.MIGRATIONS_DIR) return resolve(process.env.MIGRATIONS_DIR);
	// In the built server this file is bundled away from src/; fall back to the working directory.
	const here = dirname(fileURLToPath(import.meta.url));
	const candidates = [resolve(here, '../../../../drizzle'), resolve(process.cwd(), 'drizzle')];
	return candidates.find((c) => existsSync(c)) ?? candidates[1];
}

/**
 * Creates the database file (and any missing folders on the way) readable by the owner only:
 * it holds customers' names and addresses and password hashes. SQLite gives the -wal and -shm
 * files the database file's permissions. Existing files and folders keep theirs.
 */
export function createPrivateFile(path: string): void {
	mkdirSync(dirname(path), { recursive: true, mode: 0o700 });
	if (!existsSync(path)) closeSync(openSync(path, 'a', 0o600));
}

/**
 * Open (creating if needed) and migrate. `:memory:` gives a private database for tests.
 * WAL + synchronous=FULL: an acknowledged commit survives a power cut.
 */
export function openDb(url: string, options: { migrate?: boolean } = {}): Db {
	if (url !== ':memory:' && url !== '') createPrivateFile(resolve(url));
	const sqlite = new Database(url);
	sqlite.pragma('journal_mode = WAL');
	sqlite.pragma('synchronous = FULL');
	sqlite.pragma('busy_timeout = 5000');
	sqlite.pragma('foreign_keys = ON');
	const db = drizzle(sqlite, { schema }) as Db;
	if (options.migrate !== false) {
		migrate(db, { migrationsFolder: migrationsFolder() });
		// The model notebook's key of every job not keyed yet (all of them once, after the upgrade).
		syncModelKeys(sqlite);
		// Snapshot audio from before the blob store moves there (verified, idempotent, crash-safe).
		if (url !== ':memory:' && url !== '') {
			const moved = migrateSnapshotAudio(sqlite, storeRootFor(url));
			if (moved.moved) console.log(`Moved ${moved.moved} snapshot recordings into the blob store`);
			if (moved.mismatched.length)
				console.error(
					`Snapshot audio of #${moved.mismatched.join(', #')} does not match its recorded SHA-256; left in the database`
				);
		}
	}
	return db;
}
