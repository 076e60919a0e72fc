// The blob store: names are SHA-256 (FIPS 180-4), equal bytes are stored once, and a damaged blob
// is refused on read.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readdirSync, rmSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { BlobCorruptError, BlobMissingError, BlobTooLargeError, LocalDiskStore } from './storage';

const root = mkdtempSync(join(tmpdir(), 'blob-test-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

const files = (dir: string): string[] =>
	readdirSync(dir, { withFileTypes: true }).flatMap((d) =>
		d.isDirectory() ? files(join(dir, d.name)).map((f) => join(d.name, f)) : [d.name]
	);

describe('LocalDiskStore', () => {
	const store = new LocalDiskStore(root);

	it('names a blob by its SHA-256', async () => {
		// FIPS 180-2 appendix B.1 example: SHA-256("abc").
		const r = await store.put(Buffer.from('abc'));
		expect(r).toEqual({
			sha256: 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad',
			bytes: 3
		});
		expect(existsSync(join(root, 'ba', '78', r.sha256))).toBe(true);
		expect((await store.get(r.sha256)).toString()).toBe('abc');
	});

	it('stores equal bytes once, from bytes or a stream', async () => {
		const data = Buffer.alloc(200_000, 7);
		const a = await store.put(data);
		async function* chunks() {
			for (let i = 0; i < data.length; i += 65_536) yield data.subarray(i, i + 65_536);
		}
		const b = await store.put(chunks());
		expect(b).toEqual(a);
		expect(files(root).filter((f) => f.endsWith(a.sha256))).toHaveLength(1);
		expect(readdirSync(join(root, 'tmp'))).toEqual([]);
	});

	it('refuses a damaged or missing blob on read', async () => {
		const r = await store.put(Buffer.from('the after capture'));
		writeFileSync(store.pathOf(r.sha256), 'the after captura');
		await expect(store.get(r.sha256)).rejects.toBeInstanceOf(BlobCorruptError);
		await expect(store.get('0'.repeat(64))).rejects.toBeInstanceOf(BlobMissingError);
		expect(await store.has('0'.repeat(64))).toBe(false);
	});

	it('stores nothing past maxBytes', async () => {
		const before = files(root).length;
		await expect(store.put(Buffer.alloc(11), { maxBytes: 10 })).rejects.toBeInstanceOf(BlobTooLargeError);
		expect(files(root).length).toBe(before);
	});

	it('refuses a name that is not a SHA-256 (no path tricks)', () => {
		expect(() => store.pathOf('../../etc/passwd')).toThrow(/not a SHA-256/);
	});
});
