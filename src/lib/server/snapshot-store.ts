// Writing a snapshot: one transaction that re-checks the job lock and the storage caps, then
// inserts the row and its audio. Plain SQL on a better-sqlite3 connection (the row's INSERT is
// built by drizzle on the request thread), so the same function runs on the request thread's
// connection (an in-memory database) and on a worker thread's own connection to the database file,
// where writing 32 MiB and syncing it to disk (0.4 s and more) belongs. No framework imports.
//
// The audio itself goes to the blob store (storage.ts) beside the database, named by its SHA-256;
// the database keeps the hash and size (`snapshot_audio_blobs`). Audio written before the store
// existed sits in `snapshot_audio` until `migrateSnapshotAudio` moves it.
import type { Database } from 'better-sqlite3';
import { LocalDiskStore, sha256Hex } from './storage';

export interface StorageLimits {
	perJobMiB: number;
	perShopGiB: number;
}

export interface StorePlan {
	jobId: number;
	/** Job statuses that mean signed off, and what to say then (the rule lives in jobs.ts). */
	lockedStatuses: readonly string[];
	lockedMessage: string;
	storage: StorageLimits;
	/** `INSERT INTO snapshots … RETURNING id`, as drizzle built it. */
	insert: { sql: string; params: unknown[] };
	sha256: string;
	/** The blob store's folder (storage.ts `storeRootFor` the database file). */
	storeRoot: string;
	/** The audit entry written in the same transaction ('snapshot.captured'). */
	audit: { actorId: string | null; label: string; detail: unknown };
}

/** A refusal found inside the transaction; the caller answers it with its status. */
export class StoreRefusal extends Error {
	constructor(
		readonly code: 'not-found' | 'conflict' | 'too-large',
		message: string,
		readonly issues?: { path: string; message: string }[]
	) {
		super(message);
		this.name = 'StoreRefusal';
	}
}

const MIB = 1024 * 1024;
const GIB = 1024 * MIB;
const mib = (bytes: number) => `${(bytes / MIB).toFixed(1)} MiB`;
const gib = (bytes: number) => `${(bytes / GIB).toFixed(2)} GiB`;

/** Bytes of snapshot audio stored for one job and for the whole shop. */
export function snapshotStorageUse(client: Database, jobId: number): { jobBytes: number; shopBytes: number } {
	// Audio in the store counts by its recorded size; audio not yet moved there by length() of its
	// BLOB, read from the record header (the audio itself is not loaded).
	const row = client
		.prepare(
			`select coalesce(sum(case when s.job_id = ? then a.bytes end), 0) as jobBytes,
			        coalesce(sum(a.bytes), 0) as shopBytes
			   from (select snapshot_id, bytes from snapshot_audio_blobs
			         union all
			         select snapshot_id, length(wav) from snapshot_audio) a
			   join snapshots s on s.id = a.snapshot_id`
		)
		.get(jobId) as { jobBytes: number; shopBytes: number };
	return { jobBytes: Number(row.jobBytes), shopBytes: Number(row.shopBytes) };
}

/** The 413 for `bytes` more audio when it would pass the job's or the shop's cap, naming the cap and the use. */
export function storageRefusal(
	use: { jobBytes: number; shopBytes: number },
	bytes: number,
	limits: StorageLimits
): StoreRefusal | null {
	if (use.jobBytes + bytes > limits.perJobMiB * MIB)
		return new StoreRefusal(
			'too-large',
			`samples: this job's snapshot audio cap is ${limits.perJobMiB} MiB and ${mib(use.jobBytes)} is stored; ` +
				`this ${mib(bytes)} upload does not fit. An admin can raise “Snapshot audio per job” in Settings.`,
			[{ path: 'samples', message: `per-job cap ${limits.perJobMiB} MiB, ${mib(use.jobBytes)} used` }]
		);
	if (use.shopBytes + bytes > limits.perShopGiB * GIB)
		return new StoreRefusal(
			'too-large',
			`samples: the shop's snapshot audio cap is ${limits.perShopGiB} GiB and ${gib(use.shopBytes)} is stored; ` +
				`this ${mib(bytes)} upload does not fit. An admin can raise “Snapshot audio for the shop” in Settings.`,
			[{ path: 'samples', message: `per-shop cap ${limits.perShopGiB} GiB, ${gib(use.shopBytes)} used` }]
		);
	return null;
}

/**
 * Put the audio in the blob store, then insert the snapshot and the audio's hash in one
 * transaction; throws StoreRefusal (no row stored; the blob may stay, unreferenced and harmless).
 */
export function writeSnapshot(client: Database, plan: StorePlan, wav: Uint8Array): number {
	const stored = new LocalDiskStore(plan.storeRoot).putSync(wav);
	if (stored.sha256 !== plan.sha256)
		throw new Error('the snapshot audio changed between its analysis and its storage');
	const write = client.transaction(() => {
		// Checked again here: the job may have been signed off, or the room taken, while it was analysed.
		const job = client.prepare('select status from jobs where id = ?').get(plan.jobId) as
			{ status: string } | undefined;
		if (!job) throw new StoreRefusal('not-found', 'No such job');
		if (plan.lockedStatuses.includes(job.status)) throw new StoreRefusal('conflict', plan.lockedMessage);
		const refusal = storageRefusal(snapshotStorageUse(client, plan.jobId), wav.byteLength, plan.storage);
		if (refusal) throw refusal;
		const row = client.prepare(plan.insert.sql).get(...plan.insert.params) as { id: number };
		client
			.prepare('insert into snapshot_audio_blobs (snapshot_id, sha256, bytes) values (?, ?, ?)')
			.run(row.id, plan.sha256, stored.bytes);
		// Plain SQL because this may run on a worker's own connection; same row shape as audit().
		client
			.prepare(
				'insert into audit_log (at, actor_id, action, job_id, subject, detail) values (?, ?, ?, ?, ?, ?)'
			)
			.run(
				Date.now(),
				plan.audit.actorId,
				'snapshot.captured',
				plan.jobId,
				`snapshot #${row.id} “${plan.audit.label}”`,
				JSON.stringify(plan.audit.detail)
			);
		return row.id;
	});
	// IMMEDIATE: take the write lock first, so the checks and the inserts see one state.
	return write.immediate();
}

export interface AudioMigrationReport {
	/** Captures moved from the database into the store (this run). */
	moved: number;
	/** Captures whose database bytes do not match their recorded hash: left where they are. */
	mismatched: number[];
}

/**
 * Move snapshot audio still held in the database into the blob store, one capture at a time: put
 * the bytes, read them back and check them against the recorded hash, record the reference, and
 * only then delete the database copy (in one transaction; a trigger refuses the delete unless the
 * reference with the same hash exists). Safe to run again after a crash at any point; a capture
 * whose bytes do not match its recorded hash is left in the database and reported.
 */
export function migrateSnapshotAudio(client: Database, storeRoot: string): AudioMigrationReport {
	const store = new LocalDiskStore(storeRoot);
	const report: AudioMigrationReport = { moved: 0, mismatched: [] };
	const ids = (
		client.prepare('select snapshot_id as id from snapshot_audio order by snapshot_id').all() as {
			id: number;
		}[]
	).map((r) => r.id);
	const read = client.prepare('select sha256, wav from snapshot_audio where snapshot_id = ?');
	const ref = client.prepare('select sha256 from snapshot_audio_blobs where snapshot_id = ?');
	const insert = client.prepare(
		'insert into snapshot_audio_blobs (snapshot_id, sha256, bytes) values (?, ?, ?)'
	);
	const remove = client.prepare('delete from snapshot_audio where snapshot_id = ? and sha256 = ?');
	for (const id of ids) {
		const row = read.get(id) as { sha256: string; wav: Buffer } | undefined;
		if (!row) continue;
		if (sha256Hex(row.wav) !== row.sha256) {
			report.mismatched.push(id);
			continue;
		}
		store.putSync(row.wav);
		// Read back from disk: the copy must be good before the database's is dropped.
		store.getSync(row.sha256);
		client
			.transaction(() => {
				const existing = ref.get(id) as { sha256: string } | undefined;
				if (!existing) insert.run(id, row.sha256, row.wav.byteLength);
				else if (existing.sha256 !== row.sha256)
					throw new Error(`snapshot ${id}: two different audio hashes`);
				remove.run(id, row.sha256);
			})
			.immediate();
		report.moved++;
	}
	return report;
}
