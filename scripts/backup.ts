// `npm run backup [-- OUT]`: a consistent online copy of the database through SQLite's
// backup API (safe while the app is running), then checked with integrity_check and
// foreign_key_check. Exits non-zero when the copy fails either check.
import Database from 'better-sqlite3';
import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { createPrivateFile } from '../src/lib/server/db/open';
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
	if (!result.ok) {
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
