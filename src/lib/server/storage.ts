// Content-addressed blob store: job files, thumbnails and snapshot audio are kept by the SHA-256 of
// their bytes, so a file uploaded twice is stored once and every read is checked against its name.
// `BlobStore` is what the rest of the server uses; `LocalDiskStore` keeps blobs under the data
// folder. A cloud object store can implement the same four calls later. No framework imports: the
// analysis worker writes snapshot audio through this module too.
import { createHash, randomBytes } from 'node:crypto';
import {
	closeSync,
	existsSync,
	fsyncSync,
	mkdirSync,
	openSync,
	readFileSync,
	renameSync,
	unlinkSync,
	writeSync
} from 'node:fs';
import { mkdir, open, rename, rm, stat, unlink } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import { tmpdir } from 'node:os';

export const SHA256_PATTERN = /^[0-9a-f]{64}$/;

export interface StoredBlob {
	sha256: string;
	bytes: number;
}

/** Bytes whose hash is not their name: the store is damaged (disk, hand edit); never served. */
export class BlobCorruptError extends Error {
	constructor(readonly sha256: string) {
		super(`stored blob ${sha256} does not match its SHA-256: the store is damaged; restore it from a backup`);
		this.name = 'BlobCorruptError';
	}
}

export class BlobMissingError extends Error {
	constructor(readonly sha256: string) {
		super(`stored blob ${sha256} is missing from the store; restore it from a backup`);
		this.name = 'BlobMissingError';
	}
}

/** More bytes than `maxBytes` were offered to `put`: nothing was stored. */
export class BlobTooLargeError extends Error {
	constructor(readonly maxBytes: number) {
		super(`more than ${maxBytes} bytes`);
		this.name = 'BlobTooLargeError';
	}
}

export type BlobSource = Uint8Array | AsyncIterable<Uint8Array>;

export interface BlobStore {
	/** Store bytes (or a stream of them), named by their SHA-256; storing the same bytes again is a no-op. */
	put(source: BlobSource, options?: { maxBytes?: number }): Promise<StoredBlob>;
	/** The bytes, checked against `sha256`; BlobMissingError / BlobCorruptError otherwise. */
	get(sha256: string): Promise<Buffer>;
	has(sha256: string): Promise<boolean>;
	/** Size in bytes, or null when absent (no hash check). */
	size(sha256: string): Promise<number | null>;
}

export function sha256Hex(bytes: Uint8Array): string {
	return createHash('sha256').update(bytes).digest('hex');
}

function assertHash(sha256: string): void {
	if (!SHA256_PATTERN.test(sha256)) throw new Error(`not a SHA-256 hex name: ${sha256.slice(0, 80)}`);
}

/**
 * Hashing runs on the calling thread: whole buffers are cut into 1 MiB pieces (~3 ms of SHA-256
 * each) so a 50 MiB file never holds the request thread for more than one piece at a time.
 */
const PIECE_BYTES = 1024 * 1024;

async function* chunksOf(source: BlobSource): AsyncIterable<Uint8Array> {
	if (source instanceof Uint8Array) {
		for (let at = 0; at < source.byteLength; at += PIECE_BYTES)
			yield source.subarray(at, Math.min(source.byteLength, at + PIECE_BYTES));
	} else yield* source;
}

/**
 * Blobs as files under `root`: `ab/cd/abcd…` (two shard levels keep folders small). A write goes to
 * `tmp/` first, is synced, then renamed into place, so a crash leaves no half-written blob under its
 * name; an existing blob is kept (same name, same bytes).
 */
export class LocalDiskStore implements BlobStore {
	readonly root: string;

	constructor(root: string) {
		this.root = resolve(root);
	}

	pathOf(sha256: string): string {
		assertHash(sha256);
		return join(this.root, sha256.slice(0, 2), sha256.slice(2, 4), sha256);
	}

	async put(source: BlobSource, options: { maxBytes?: number } = {}): Promise<StoredBlob> {
		const tmpDir = join(this.root, 'tmp');
		await mkdir(tmpDir, { recursive: true, mode: 0o700 });
		const tmp = join(tmpDir, `${Date.now()}-${randomBytes(8).toString('hex')}`);
		const hash = createHash('sha256');
		let bytes = 0;
		const file = await open(tmp, 'wx', 0o600);
		try {
			for await (const chunk of chunksOf(source)) {
				bytes += chunk.byteLength;
				if (options.maxBytes !== undefined && bytes > options.maxBytes)
					throw new BlobTooLargeError(options.maxBytes);
				hash.update(chunk);
				await file.write(chunk);
			}
			await file.sync();
		} catch (e) {
			await file.close();
			await rm(tmp, { force: true });
			throw e;
		}
		await file.close();
		const sha256 = hash.digest('hex');
		const final = this.pathOf(sha256);
		if (existsSync(final)) {
			await unlink(tmp);
		} else {
			await mkdir(dirname(final), { recursive: true, mode: 0o700 });
			await rename(tmp, final);
			await syncDir(dirname(final));
		}
		return { sha256, bytes };
	}

	async get(sha256: string): Promise<Buffer> {
		const path = this.pathOf(sha256);
		let file;
		try {
			file = await open(path, 'r');
		} catch (e) {
			if ((e as NodeJS.ErrnoException).code === 'ENOENT') throw new BlobMissingError(sha256);
			throw e;
		}
		try {
			// Read and hash a piece at a time, yielding between pieces (see PIECE_BYTES).
			const size = (await file.stat()).size;
			const data = Buffer.allocUnsafe(size);
			const hash = createHash('sha256');
			let at = 0;
			while (at < size) {
				const { bytesRead } = await file.read(data, at, Math.min(PIECE_BYTES, size - at), at);
				if (bytesRead === 0) break;
				hash.update(data.subarray(at, at + bytesRead));
				at += bytesRead;
			}
			if (at !== size || hash.digest('hex') !== sha256) throw new BlobCorruptError(sha256);
			return data;
		} finally {
			await file.close();
		}
	}

	/**
	 * `put` for whole bytes without awaiting: for the snapshot writer, which runs inside a
	 * synchronous SQLite transaction's caller on a worker thread (local disk only).
	 */
	putSync(data: Uint8Array): StoredBlob {
		const sha256 = sha256Hex(data);
		const final = this.pathOf(sha256);
		if (existsSync(final)) return { sha256, bytes: data.byteLength };
		const tmpDir = join(this.root, 'tmp');
		mkdirSync(tmpDir, { recursive: true, mode: 0o700 });
		const tmp = join(tmpDir, `${Date.now()}-${randomBytes(8).toString('hex')}`);
		const fd = openSync(tmp, 'wx', 0o600);
		try {
			let at = 0;
			while (at < data.byteLength) at += writeSync(fd, data, at, data.byteLength - at);
			fsyncSync(fd);
		} catch (e) {
			closeSync(fd);
			unlinkSync(tmp);
			throw e;
		}
		closeSync(fd);
		mkdirSync(dirname(final), { recursive: true, mode: 0o700 });
		renameSync(tmp, final);
		return { sha256, bytes: data.byteLength };
	}

	/** `get` without awaiting (same checks). */
	getSync(sha256: string): Buffer {
		let data: Buffer;
		try {
			data = readFileSync(this.pathOf(sha256));
		} catch (e) {
			if ((e as NodeJS.ErrnoException).code === 'ENOENT') throw new BlobMissingError(sha256);
			throw e;
		}
		if (sha256Hex(data) !== sha256) throw new BlobCorruptError(sha256);
		return data;
	}

	async has(sha256: string): Promise<boolean> {
		return (await this.size(sha256)) !== null;
	}

	async size(sha256: string): Promise<number | null> {
		try {
			return (await stat(this.pathOf(sha256))).size;
		} catch {
			return null;
		}
	}
}

/** A rename is durable once its folder is synced (Linux); harmless where folders cannot be opened. */
async function syncDir(dir: string): Promise<void> {
	try {
		const handle = await open(dir, 'r');
		try {
			await handle.sync();
		} finally {
			await handle.close();
		}
	} catch {
		// Some platforms refuse fsync on a folder; the rename is still atomic.
	}
}

/**
 * Where a database's blobs live: `store/` beside the database file (so the data folder holds both
 * and a backup copies both), or one private temporary folder per process for an in-memory database.
 */
export function storeRootFor(databaseFile: string): string {
	if (databaseFile === '' || databaseFile === ':memory:') {
		memoryRoot ??= join(tmpdir(), `benchlight-store-${process.pid}-${randomBytes(4).toString('hex')}`);
		mkdirSync(memoryRoot, { recursive: true, mode: 0o700 });
		return memoryRoot;
	}
	return join(dirname(resolve(databaseFile)), 'store');
}
let memoryRoot: string | undefined;

const stores = new Map<string, LocalDiskStore>();

/** The store that belongs with a database (see `storeRootFor`). */
export function blobStoreFor(databaseFile: string): LocalDiskStore {
	const root = storeRootFor(databaseFile);
	let store = stores.get(root);
	if (!store) {
		store = new LocalDiskStore(root);
		stores.set(root, store);
	}
	return store;
}
