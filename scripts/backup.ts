// `npm run backup [-- OUT]`: a consistent online copy of the database through SQLite's
// backup API (safe while the app is running), then checked with integrity_check and
// foreign_key_check; then every blob the copy refers to (job files, thumbnails, snapshot audio)
// is copied from the blob store into `store/` beside the copy and checked against its SHA-256.
// The store only ever gains blobs, and a blob is written before the row naming it commits, so
// the database copy taken first and the blobs copied after it are consistent. Backups in one
// folder share their `store/` (same bytes, same name: each blob is kept once). Exits non-zero
// when either part fails.
import Database from 'better-sqlite3';
import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { createPrivateFile } from '../src/lib/server/db/open';
import { LocalDiskStore, sha256Hex, storeRootFor } from '../src/lib/server/storage';
import { env } from '../src/lib/server/env';

function stamp(d = new Date()): string {
	const p = (n: number) => String(n).padStart(2, '0');
	return `${d.getFullYear()}${p(d.getMonth() + 1)}${p(d.getDate())}-${p(d.getHours())}${p(d.getMinutes())}${p(d.getSeconds())}`;
}

export interface BackupResult {
	path: string;
	integrity: string[];
	foreignKeyProblems: number;
	ok: boolean;
}

/** Copy `sourcePath` to `outPath` online and verify the copy. */
export async function backupDatabase(sourcePath: string, outPath: string): Promise<BackupResult> {
	if (!existsSync(sourcePath)) throw new Error(`No database at ${sourcePath}`);
	// A copy of the database is as private as the database: owner-only file (and new folders).
	createPrivateFile(resolve(outPath));
	const source = new Database(sourcePath, { fileMustExist: true });
	try {
		source.pragma('busy_timeout = 5000');
		await source.backup(outPath);
	} finally {
		source.close();
	}
	const copy = new Database(outPath, { readonly: true, fileMustExist: true });
	try {
		const integrity = (copy.pragma('integrity_check') as { integrity_check: string }[]).map(
			(r) => r.integrity_check
		);
		const fk = copy.pragma('foreign_key_check') as unknown[];
		return {
			path: outPath,
			integrity,
			foreignKeyProblems: fk.length,
			ok: integrity.length === 1 && integrity[0] === 'ok' && fk.length === 0
		};
	} finally {
		copy.close();
	}
}

export interface StoreBackupResult {
	storeRoot: string;
	/** Blobs the database copy refers to. */
	referenced: number;
	/** Copied now (the rest were already in the backup store and verified there). */
	copied: number;
	/** Hashes missing from the live store or whose bytes do not match. */
	problems: string[];
	ok: boolean;
}

/** Every blob hash a database (copy) refers to. */
export function referencedBlobs(dbPath: string): string[] {
	const db = new Database(dbPath, { readonly: true, fileMustExist: true });
	try {
		const rows = db
			.prepare(
				`select sha256 as h from job_files
				 union select thumb_sha256 from job_files where thumb_sha256 is not null
				 union select sha256 from snapshot_audio_blobs`
			)
			.all() as { h: string }[];
		return rows.map((r) => r.h).sort();
	} finally {
		db.close();
	}
}

/** Copy the blobs `dbCopyPath` refers to from `sourceRoot` into the store beside the copy, verifying each. */
export async function backupStore(dbCopyPath: string, sourceRoot: string): Promise<StoreBackupResult> {
	const source = new LocalDiskStore(sourceRoot);
	const target = new LocalDiskStore(storeRootFor(dbCopyPath));
	const hashes = referencedBlobs(dbCopyPath);
	const problems: string[] = [];
	let copied = 0;
	for (const sha of hashes) {
		try {
			// A blob already in the backup store is read back and checked like a new one.
			if (await target.has(sha)) {
				await target.get(sha);
				continue;
			}
			const bytes = await source.get(sha);
			const put = await target.put(bytes);
			if (put.sha256 !== sha || sha256Hex(await target.get(sha)) !== sha) problems.push(sha);
			else copied++;
		} catch {
			problems.push(sha);
		}
	}
	return { storeRoot: target.root, referenced: hashes.length, copied, problems, ok: problems.length === 0 };
}

async function main(): Promise<void> {
	const source = env.DATABASE_URL;
	if (source === ':memory:') throw new Error('DATABASE_URL is :memory:, nothing to back up');
	const out = process.argv[2] ?? `data/backups/benchlight-${stamp()}.db`;
	const result = await backupDatabase(source, out);
	console.log(`Backup of ${source} written to ${result.path}`);
	console.log(`  integrity_check:   ${result.integrity.join('; ')}`);
	console.log(
		`  foreign_key_check: ${result.foreignKeyProblems === 0 ? 'ok' : `${result.foreignKeyProblems} problem rows`}`
	);
	const store = result.ok ? await backupStore(result.path, storeRootFor(source)) : null;
	if (store) {
		console.log(
			`  blob store:        ${store.referenced} blobs in ${store.storeRoot} (${store.copied} copied now), ` +
				(store.ok
					? 'all verified'
					: `${store.problems.length} missing or damaged: ${store.problems.join(', ')}`)
		);
	}
	if (!result.ok || !store?.ok) {
		console.error('Backup FAILED verification: do not rely on this copy.');
		process.exit(1);
	}
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	main().catch((e) => {
		console.error(e instanceof Error ? e.message : e);
		process.exit(1);
	});
}
