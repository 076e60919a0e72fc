// Files on a job: photos, PDFs and WAV captures. An upload streams part by part to a spool file
// (never held whole), is typed by its content (file-sniff.ts), and goes into the blob store
// (storage.ts) named by its SHA-256. Photos are re-encoded at upload without their metadata (EXIF,
// GPS location, XMP), so what is stored is what is served, byte for byte; the hash of the bytes as
// received is kept beside it. A WAV is measured on the analysis pool and can become a snapshot
// through the same path as a bench capture. Files are never deleted, only marked removed.
import { createReadStream } from 'node:fs';
import { mkdtemp, open, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createHash } from 'node:crypto';
import { and, asc, eq, isNull } from 'drizzle-orm';
import sharp from 'sharp';
import {
	ACCEPTED_TYPES_TEXT,
	JOB_FILE_TYPES,
	PHOTO_TYPES,
	type JobFileType,
	type JobFileView,
	type WavFigures
} from '$lib/schemas/job-files';
import type { Role } from './db/schema';
import type { Db } from './db/open';
import * as table from './db/schema';
import { audit } from './audit';
import { DomainError, type Issue } from './errors';
import { assertJobOpen } from './jobs';
import { getSettings } from './settings';
import { streamMultipart, type PartSink } from './multipart';
import { SNIFF_HEAD_BYTES, SNIFF_TAIL_BYTES, claimedOtherType, sniffFile } from './file-sniff';
import type { BlobStore } from './storage';
import type { SnapshotAnalysisOutput, SnapshotAnalysisRequest } from './snapshot-analysis';
import type { CreateSnapshotInput, CreatedSnapshot } from './snapshots';

const MIB = 1024 * 1024;
/** Most files in one upload request. */
export const MAX_FILES_PER_UPLOAD = 20;
/** Longest side of a thumbnail, px. */
export const THUMB_PX = 320;

export type Analyse = (request: SnapshotAnalysisRequest) => Promise<SnapshotAnalysisOutput>;

interface Spooled {
	name: string;
	path: string;
	bytes: number;
	receivedSha256: string;
	head: Buffer;
	tail: Buffer;
	oversize: boolean;
}

/** A spool file for one part: hashes as it writes and keeps the first and last bytes for sniffing. */
async function spoolSink(
	dir: string,
	index: number,
	name: string,
	maxBytes: number,
	out: Spooled[]
): Promise<PartSink> {
	const path = join(dir, `part-${index}`);
	const file = await open(path, 'wx', 0o600);
	const hash = createHash('sha256');
	const entry: Spooled = {
		name,
		path,
		bytes: 0,
		receivedSha256: '',
		head: Buffer.alloc(0),
		tail: Buffer.alloc(0),
		oversize: false
	};
	out.push(entry);
	let closed = false;
	const close = async () => {
		if (!closed) {
			closed = true;
			await file.close();
		}
	};
	return {
		async write(chunk) {
			entry.bytes += chunk.byteLength;
			if (entry.oversize) return;
			if (entry.bytes > maxBytes) {
				// Past the limit: the rest is read and dropped so the client gets the 413, not a reset.
				entry.oversize = true;
				await close();
				await rm(path, { force: true });
				return;
			}
			hash.update(chunk);
			if (entry.head.length < SNIFF_HEAD_BYTES)
				entry.head = Buffer.concat([entry.head, chunk.subarray(0, SNIFF_HEAD_BYTES - entry.head.length)]);
			entry.tail = Buffer.concat([entry.tail, chunk]).subarray(-SNIFF_TAIL_BYTES);
			await file.write(chunk);
		},
		async end() {
			if (!entry.oversize) entry.receivedSha256 = hash.digest('hex');
			await close();
		}
	};
}

/** A display name: the last path segment, control characters dropped, at most 200 characters. */
export function displayName(raw: string | undefined): string {
	const base = (raw ?? '').split(/[\\/]/).pop() ?? '';
	const clean = base
		// eslint-disable-next-line no-control-regex -- control characters are what is removed
		.replace(/[\u0000-\u001f\u007f]/g, '')
		.trim()
		.slice(0, 200);
	return clean || 'unnamed';
}

/** The request body as chunks; leaving early releases the stream without cancelling it (no reset). */
export async function* bodyChunks(body: ReadableStream<Uint8Array>): AsyncIterable<Uint8Array> {
	const reader = body.getReader();
	try {
		for (;;) {
			let step: ReadableStreamReadResult<Uint8Array>;
			try {
				step = await reader.read();
			} catch (e) {
				// The server's own body limit ends the stream with a 413 of its own.
				if ((e as { status?: number })?.status === 413)
					throw new DomainError(
						'too-large',
						'The upload is larger than the server accepts in one request; send fewer files at once'
					);
				throw e;
			}
			if (step.done) return;
			yield step.value;
		}
	} finally {
		reader.releaseLock();
	}
}

/** Photo bytes without metadata, turned upright (the EXIF orientation is applied, then dropped). */
async function stripPhoto(type: JobFileType, path: string): Promise<Buffer> {
	// sharp runs on libuv's thread pool, not the request thread; failOn 'truncated' refuses a cut-off image.
	const image = sharp(path, { failOn: 'truncated' }).rotate();
	if (type === 'jpeg') return image.jpeg({ quality: 92 }).toBuffer();
	if (type === 'png') return image.png({ compressionLevel: 9 }).toBuffer();
	return image.webp({ quality: 92 }).toBuffer();
}

async function thumbnail(bytes: Buffer): Promise<Buffer> {
	return sharp(bytes)
		.resize({ width: THUMB_PX, height: THUMB_PX, fit: 'inside', withoutEnlargement: true })
		.webp({ quality: 70 })
		.toBuffer();
}

/** WAV figures with default conditions (20 Hz–20 kHz, unweighted, full scale 1 V): relative figures. */
export function wavRequest(wav: Uint8Array, mainsHz: 50 | 60): SnapshotAnalysisRequest {
	return { wav, fullScaleVolts: 1, bandHz: [20, 20_000], weighting: 'none', stimulus: 'tone', mainsHz };
}

function figuresOf(out: SnapshotAnalysisOutput): WavFigures {
	return {
		sampleRateHz: out.sampleRateHz,
		channelCount: out.channelCount,
		durationS: out.capturedSamples / out.sampleRateHz,
		bandHz: out.analysis.conditions.bandHz,
		fullScaleVolts: 1,
		channels: out.analysis.channels.map((c) => ({
			channel: c.channel,
			frequencyHz: c.frequencyHz,
			levelDbfs: c.levelDbfs,
			thdnPercent: c.thdnPercent,
			thdnDb: c.thdnDb,
			snrDb: c.snrDb,
			signalReason: c.signalReason
		}))
	};
}

export interface UploadInput {
	jobId: number;
	userId: string;
	body: AsyncIterable<Uint8Array>;
	boundary: string;
	store: BlobStore;
	/** Measures a WAV: the analysis pool on the server, inline in tests; its refusals become `analysisError`. */
	analyse: Analyse;
}

function refusedMessage(issues: Issue[], unsupported: boolean, oversize: boolean, maxMiB: number): string {
	const parts: string[] = [];
	if (oversize) parts.push(`files larger than ${maxMiB} MiB are refused (the shop's per-file limit)`);
	if (unsupported)
		parts.push(`accepted are ${ACCEPTED_TYPES_TEXT}, decided by the file's content, not its name`);
	return `${issues.map((i) => i.message).join('; ')}. Nothing was attached: ${parts.join('; ')}.`;
}

/**
 * Receive a multipart upload of one or more `file` parts for a job. All or nothing: when any file
 * is refused (413 too large, 415 not an accepted type or cut off), none is attached and the answer
 * names every refused file. Returns the attached files.
 */
export async function uploadJobFiles(db: Db, input: UploadInput): Promise<JobFileView[]> {
	assertJobOpen(db, input.jobId);
	return receiveFiles(db, input, { jobId: input.jobId, modelKey: null });
}

/**
 * The same upload for a model's notebook (service manual, schematic, alignment notes): the files
 * belong to the model key (`make/model`), not to a job, so no job lock applies.
 */
export async function uploadModelFiles(
	db: Db,
	input: Omit<UploadInput, 'jobId'> & { modelKey: string }
): Promise<JobFileView[]> {
	return receiveFiles(db, input, { jobId: null, modelKey: input.modelKey });
}

type FileOwner = { jobId: number; modelKey: null } | { jobId: null; modelKey: string };

async function receiveFiles(
	db: Db,
	input: Omit<UploadInput, 'jobId'>,
	owner: FileOwner
): Promise<JobFileView[]> {
	const settings = getSettings(db);
	const maxMiB = settings.jobFiles.maxFileMiB;
	const spoolDir = await mkdtemp(join(tmpdir(), 'benchlight-upload-'));
	try {
		const spooled: Spooled[] = [];
		const badParts: string[] = [];
		await streamMultipart(input.body, input.boundary, async (head) => {
			if (head.name !== 'file' || head.filename === undefined) {
				badParts.push(head.name);
				return { write() {}, end() {} };
			}
			if (spooled.length >= MAX_FILES_PER_UPLOAD)
				throw new DomainError('invalid', `Send at most ${MAX_FILES_PER_UPLOAD} files in one upload`);
			return spoolSink(spoolDir, spooled.length, displayName(head.filename), maxMiB * MIB, spooled);
		}).catch((e) => {
			if (e instanceof DomainError) throw e;
			if (e instanceof Error && e.name === 'MultipartError')
				throw new DomainError('invalid', `The body is not valid multipart/form-data: ${e.message}`);
			throw e;
		});
		if (badParts.length)
			throw new DomainError(
				'invalid',
				`Only parts named “file” with a file name are accepted; got ${badParts.map((n) => `“${n}”`).join(', ')}`
			);
		if (!spooled.length) throw new DomainError('invalid', 'Attach one or more files as parts named “file”');

		// Every refusal at once: sizes first (413 wins over 415 when both happen).
		const issues: Issue[] = [];
		const types: JobFileType[] = [];
		let oversize = false;
		let unsupported = false;
		for (const [i, f] of spooled.entries()) {
			if (f.oversize) {
				oversize = true;
				issues.push({
					path: `file.${i}`,
					message: `${f.name} is ${(f.bytes / MIB).toFixed(1)} MiB, over the ${maxMiB} MiB limit`
				});
				continue;
			}
			const sniffed = await sniffFile(f.head, f.tail, f.bytes);
			const claimed = sniffed.ok ? claimedOtherType(f.name, sniffed.type) : null;
			if (sniffed.ok && claimed) {
				unsupported = true;
				issues.push({
					path: `file.${i}`,
					message: `${f.name} is named as ${claimed.toUpperCase()} but its content is ${sniffed.type.toUpperCase()}; rename it or attach the right file`
				});
			} else if (sniffed.ok) types.push(sniffed.type);
			else {
				unsupported = true;
				issues.push({
					path: `file.${i}`,
					message:
						sniffed.reason === 'truncated'
							? `${f.name} looks like ${sniffed.type.toUpperCase()} but is cut off (incomplete)`
							: `${f.name} is ${sniffed.detected ? `of type ${sniffed.detected}` : 'not a recognised file type'}`
				});
			}
		}
		if (issues.length)
			throw new DomainError(
				oversize ? 'too-large' : 'unsupported-type',
				refusedMessage(issues, unsupported, oversize, maxMiB),
				issues
			);

		// Store, make thumbnails, measure WAVs; then one transaction records them all.
		const rows: (typeof table.jobFiles.$inferInsert)[] = [];
		const figures: (WavFigures | undefined)[] = [];
		const now = new Date();
		for (const [i, f] of spooled.entries()) {
			const type = types[i];
			let stored: { sha256: string; bytes: number };
			let thumbSha256: string | null = null;
			let analysis: unknown = null;
			if (PHOTO_TYPES.includes(type)) {
				let clean: Buffer;
				try {
					clean = await stripPhoto(type, f.path);
				} catch (e) {
					throw new DomainError(
						'unsupported-type',
						`${f.name} could not be read as ${type.toUpperCase()}: ${(e as Error).message}. Accepted are ${ACCEPTED_TYPES_TEXT}.`,
						[{ path: `file.${i}`, message: `${f.name} is not a readable image` }]
					);
				}
				stored = await input.store.put(clean);
				thumbSha256 = (await input.store.put(await thumbnail(clean))).sha256;
			} else {
				stored = await input.store.put(createReadStream(f.path));
			}
			if (type === 'wav') {
				// From the spool file (already hashed on the way in): no second hash on this thread.
				const wav = await readFile(f.path);
				try {
					const out = await input.analyse(
						wavRequest(new Uint8Array(wav.buffer, wav.byteOffset, wav.byteLength), settings.mainsHz)
					);
					figures[i] = figuresOf(out);
					analysis = figures[i];
				} catch (e) {
					// A WAV the measurement core cannot read is still kept (it is the shop's record).
					analysis = { error: e instanceof Error ? e.message : String(e) };
				}
			}
			rows.push({
				jobId: owner.jobId,
				modelKey: owner.modelKey,
				sha256: stored.sha256,
				receivedSha256: f.receivedSha256,
				name: f.name,
				type,
				bytes: stored.bytes,
				uploadedBy: input.userId,
				uploadedAt: now,
				thumbSha256,
				analysis
			});
		}
		const ids = db.transaction((tx) => {
			if (owner.jobId !== null) assertJobOpen(tx as unknown as Db, owner.jobId);
			return rows.map((row) => {
				const { id } = tx.insert(table.jobFiles).values(row).returning({ id: table.jobFiles.id }).get();
				audit(tx, {
					actorId: input.userId,
					action: 'file.uploaded',
					jobId: owner.jobId,
					subject: `file #${id} “${row.name}”${owner.modelKey ? ` on model ${owner.modelKey}` : ''}`,
					detail: { type: row.type, bytes: row.bytes, sha256: row.sha256, receivedSha256: row.receivedSha256 }
				});
				return id;
			});
		});
		return ids.map((id) => getJobFile(db, id)!);
	} finally {
		await rm(spoolDir, { recursive: true, force: true });
	}
}

// ── reading ─────────────────────────────────────────────────────────────────

function viewOf(row: table.JobFile, uploadedByName: string): JobFileView {
	const a = row.analysis as (WavFigures & { error?: undefined }) | { error: string } | null;
	return {
		id: row.id,
		jobId: row.jobId,
		modelKey: row.modelKey,
		name: row.name,
		type: row.type,
		mediaType: JOB_FILE_TYPES[row.type],
		bytes: row.bytes,
		sha256: row.sha256,
		thumbSha256: row.thumbSha256,
		uploadedBy: row.uploadedBy,
		uploadedByName,
		uploadedAt: row.uploadedAt.toISOString(),
		removedAt: row.removedAt ? row.removedAt.toISOString() : null,
		snapshotId: row.snapshotId,
		...(a && a.error === undefined ? { analysis: a as WavFigures } : {}),
		...(a && a.error !== undefined ? { analysisError: a.error } : {})
	};
}

export function getJobFile(db: Db, id: number): JobFileView | null {
	const found = db
		.select({ f: table.jobFiles, name: table.users.name })
		.from(table.jobFiles)
		.innerJoin(table.users, eq(table.users.id, table.jobFiles.uploadedBy))
		.where(eq(table.jobFiles.id, id))
		.get();
	return found ? viewOf(found.f, found.name) : null;
}

/** Most files listed on a job page. */
export const JOB_FILES_LIST_LIMIT = 200;

/** A job's files, oldest first, removed ones left out (bounded). */
export function listJobFiles(db: Db, jobId: number): JobFileView[] {
	return db
		.select({ f: table.jobFiles, name: table.users.name })
		.from(table.jobFiles)
		.innerJoin(table.users, eq(table.users.id, table.jobFiles.uploadedBy))
		.where(and(eq(table.jobFiles.jobId, jobId), isNull(table.jobFiles.removedAt)))
		.orderBy(asc(table.jobFiles.uploadedAt), asc(table.jobFiles.id))
		.limit(JOB_FILES_LIST_LIMIT)
		.all()
		.map((r) => viewOf(r.f, r.name));
}

/** A file's stored bytes (checked against their hash), or its thumbnail's. 404 for a removed file. */
export async function readJobFile(
	db: Db,
	store: BlobStore,
	id: number,
	variant: 'full' | 'thumb' = 'full'
): Promise<{ file: JobFileView; bytes: Buffer; mediaType: string }> {
	const file = getJobFile(db, id);
	if (!file || file.removedAt) throw new DomainError('not-found', 'No such file');
	if (variant === 'thumb') {
		if (!file.thumbSha256) throw new DomainError('not-found', 'This file has no thumbnail (only photos do)');
		return { file, bytes: await store.get(file.thumbSha256), mediaType: 'image/webp' };
	}
	return { file, bytes: await store.get(file.sha256), mediaType: file.mediaType };
}

/** A model's documents (notebook), oldest first, removed ones left out (bounded). */
export function listModelFiles(db: Db, modelKey: string): JobFileView[] {
	return db
		.select({ f: table.jobFiles, name: table.users.name })
		.from(table.jobFiles)
		.innerJoin(table.users, eq(table.users.id, table.jobFiles.uploadedBy))
		.where(and(eq(table.jobFiles.modelKey, modelKey), isNull(table.jobFiles.removedAt)))
		.orderBy(asc(table.jobFiles.uploadedAt), asc(table.jobFiles.id))
		.limit(JOB_FILES_LIST_LIMIT)
		.all()
		.map((r) => viewOf(r.f, r.name));
}

/** Mark a file removed (the uploader or a supervisor/admin); the bytes stay in the store. */
export function removeJobFile(db: Db, id: number, actor: { id: string; role: Role }): void {
	const file = getJobFile(db, id);
	if (!file || file.removedAt || (file.jobId === null && !file.modelKey))
		throw new DomainError('not-found', 'No such file');
	if (file.uploadedBy !== actor.id && actor.role !== 'supervisor' && actor.role !== 'admin')
		throw new DomainError(
			'forbidden',
			'Only the person who uploaded this file or a supervisor can remove it'
		);
	// A model's document belongs to no job, so no job lock applies to it.
	if (file.jobId !== null) assertJobOpen(db, file.jobId);
	db.transaction((tx) => {
		tx.update(table.jobFiles)
			.set({ removedAt: new Date(), removedBy: actor.id })
			.where(eq(table.jobFiles.id, id))
			.run();
		audit(tx, {
			actorId: actor.id,
			action: 'file.removed',
			jobId: file.jobId,
			subject: `file #${id} “${file.name}”${file.modelKey ? ` on model ${file.modelKey}` : ''}`,
			detail: { sha256: file.sha256 }
		});
	});
}

/** Record that a WAV file became snapshot `snapshotId`. */
export function linkFileSnapshot(db: Db, fileId: number, snapshotId: number): void {
	db.update(table.jobFiles).set({ snapshotId }).where(eq(table.jobFiles.id, fileId)).run();
}

/**
 * Turn an uploaded WAV into a snapshot through the bench capture's own path (`create` is
 * createSnapshotInPool on the server): the same meta, analysis, limits, verdict and audit. The
 * file is read from the store (hash checked) and remembers the snapshot it became; 409 when it
 * already did.
 */
export async function snapshotFromFile(
	db: Db,
	store: BlobStore,
	fileId: number,
	userId: string,
	meta: unknown,
	create: (input: CreateSnapshotInput) => Promise<CreatedSnapshot>
): Promise<CreatedSnapshot> {
	const file = getJobFile(db, fileId);
	if (!file || file.removedAt || file.jobId === null) throw new DomainError('not-found', 'No such file');
	if (file.type !== 'wav')
		throw new DomainError(
			'invalid',
			`Only a WAV file can become a snapshot; this one is ${file.type.toUpperCase()}`
		);
	if (file.snapshotId !== null)
		throw new DomainError('conflict', `This WAV is already snapshot #${file.snapshotId}`);
	assertJobOpen(db, file.jobId);
	const wav = await store.get(file.sha256);
	const created = await create({
		jobId: file.jobId,
		userId,
		wav: new Uint8Array(wav.buffer, wav.byteOffset, wav.byteLength),
		meta
	});
	linkFileSnapshot(db, fileId, created.id);
	return created;
}
