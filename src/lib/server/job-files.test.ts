// Job files on an in-memory database: a multipart upload of real files is typed by content,
// photos lose their EXIF (location included) and gain a thumbnail, a WAV is measured, refusals
// are all-or-nothing with 413/415, removal is a mark with an audit entry, and a WAV becomes a
// snapshot through the bench capture's path.
import { beforeEach, describe, expect, it } from 'vitest';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { eq } from 'drizzle-orm';
import sharp from 'sharp';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { DomainError } from './errors';
import { LocalDiskStore } from './storage';
import { analyseSnapshotAudio } from './snapshot-analysis';
import { createSnapshot } from './snapshots';
import { updateSettings } from './settings';
import {
	getJobFile,
	listJobFiles,
	listModelFiles,
	readJobFile,
	removeJobFile,
	snapshotFromFile,
	uploadJobFiles,
	uploadModelFiles
} from './job-files';
import { pdf, photo, wav16 } from './file-fixtures';

let db: Db;
let jobId: number;
let store: LocalDiskStore;
const analyse = async (r: Parameters<typeof analyseSnapshotAudio>[0]) => analyseSnapshotAudio(r);

beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values([
			{ id: 'u1', email: 't1@example.com', name: 'Tess Bench', role: 'technician', passwordHash: 'x' },
			{ id: 'u2', email: 't2@example.com', name: 'Ivo Solder', role: 'technician', passwordHash: 'x' },
			{ id: 's1', email: 's@example.com', name: 'Sue Pervise', role: 'supervisor', passwordHash: 'x' }
		])
		.run();
	const c = db.insert(table.customers).values({ name: 'C' }).returning().get();
	jobId = db
		.insert(table.jobs)
		.values({
			customerId: c.id,
			category: 'integrated-amplifier',
			make: 'Corvane',
			model: 'IA-1',
			complaint: 'hum'
		})
		.returning()
		.get().id;
	store = new LocalDiskStore(mkdtempSync(join(tmpdir(), 'job-files-test-')));
});

const BOUNDARY = 'test-boundary-7MA4YWxkTrZu0gW';

/** A multipart body (RFC 7578) delivered in small chunks, so parts straddle chunk edges. */
async function* multipart(files: { name: string; data: Uint8Array; field?: string }[], chunk = 1000) {
	const pieces: Buffer[] = [];
	for (const f of files) {
		pieces.push(
			Buffer.from(
				`--${BOUNDARY}\r\nContent-Disposition: form-data; name="${f.field ?? 'file'}"; filename="${f.name}"\r\n` +
					`Content-Type: application/octet-stream\r\n\r\n`
			),
			Buffer.from(f.data),
			Buffer.from('\r\n')
		);
	}
	pieces.push(Buffer.from(`--${BOUNDARY}--\r\n`));
	const body = Buffer.concat(pieces);
	for (let i = 0; i < body.length; i += chunk) yield body.subarray(i, i + chunk);
}

const upload = (files: { name: string; data: Uint8Array; field?: string }[], userId = 'u1') =>
	uploadJobFiles(db, { jobId, userId, body: multipart(files), boundary: BOUNDARY, store, analyse });

async function refusal(p: Promise<unknown>): Promise<DomainError> {
	try {
		await p;
	} catch (e) {
		if (e instanceof DomainError) return e;
		throw e;
	}
	throw new Error('expected a refusal');
}

describe('uploadJobFiles', () => {
	it('attaches photos, a PDF and a WAV typed by content, strips EXIF, makes thumbnails and measures the WAV', async () => {
		const jpeg = await photo('jpeg', 800, 600, true);
		// The fixture really carries EXIF with a GPS position before upload.
		expect((await sharp(jpeg).metadata()).exif).toBeDefined();
		const files = await upload([
			{ name: 'front panel.jpg', data: jpeg },
			{ name: 'board.png', data: await photo('png', 640, 400) },
			{ name: 'service-manual.pdf', data: pdf() },
			{ name: 'before.wav', data: wav16(1, 48_000, 1000, 0.5) }
		]);
		expect(files.map((f) => [f.name, f.type])).toEqual([
			['front panel.jpg', 'jpeg'],
			['board.png', 'png'],
			['service-manual.pdf', 'pdf'],
			['before.wav', 'wav']
		]);
		const [j, p, d, w] = files;
		// Served bytes: the photo without metadata, still a 800×600 JPEG.
		const served = await readJobFile(db, store, j.id);
		const meta = await sharp(served.bytes).metadata();
		expect(meta.exif).toBeUndefined();
		expect([meta.format, meta.width, meta.height]).toEqual(['jpeg', 800, 600]);
		expect(served.mediaType).toBe('image/jpeg');
		const row = db.select().from(table.jobFiles).where(eq(table.jobFiles.id, j.id)).get()!;
		expect(row.receivedSha256).not.toBe(row.sha256);
		// Thumbnails: WebP, longest side 320 px.
		const thumb = await sharp((await readJobFile(db, store, p.id, 'thumb')).bytes).metadata();
		expect([thumb.format, thumb.width, thumb.height]).toEqual(['webp', 320, 200]);
		// PDF and WAV are stored unchanged.
		expect((await readJobFile(db, store, d.id)).bytes.equals(pdf())).toBe(true);
		expect(d.thumbSha256).toBeNull();
		// A 1 kHz sine peaking at half of full scale: −6.02 dBFS (AES17: 0 dBFS = full-scale sine; 20·lg 0.5).
		expect(w.analysis!.channels[0].frequencyHz).toBeCloseTo(1000, 0);
		expect(w.analysis!.channels[0].levelDbfs).toBeCloseTo(20 * Math.log10(0.5), 1);
		expect(w.analysis!.durationS).toBeCloseTo(1, 3);
		// 16-bit quantisation bounds THD+N near −98 dB for a full-scale sine (6.02·16 + 1.76 dB, from memory);
		// at −6 dBFS it must stay well below 0.01 %.
		expect(w.analysis!.channels[0].thdnPercent!).toBeLessThan(0.01);
		expect(listJobFiles(db, jobId)).toHaveLength(4);
		const audits = db.select().from(table.auditLog).where(eq(table.auditLog.action, 'file.uploaded')).all();
		expect(audits).toHaveLength(4);
	});

	it('stores the same bytes once (two files, one blob)', async () => {
		const data = pdf();
		const [a, b] = await upload([
			{ name: 'a.pdf', data },
			{ name: 'b.pdf', data }
		]);
		expect(a.sha256).toBe(b.sha256);
		expect(a.id).not.toBe(b.id);
	});

	it('refuses a renamed text file and a truncated JPEG with 415 naming each, attaching nothing', async () => {
		const jpeg = await photo('jpeg', 200, 150);
		const e = await refusal(
			upload([
				{ name: 'notes.jpg', data: Buffer.from('not a photo at all\n'.repeat(50)) },
				{ name: 'cut.jpg', data: jpeg.subarray(0, jpeg.length >> 1) },
				{ name: 'fine.pdf', data: pdf() }
			])
		);
		expect(e.status).toBe(415);
		expect(e.message).toMatch(/notes\.jpg is not a recognised file type/);
		expect(e.message).toMatch(/cut\.jpg looks like JPEG but is cut off/);
		expect(e.message).toMatch(/JPEG, PNG or WebP photos, PDF documents and WAV captures/);
		expect(e.issues).toHaveLength(2);
		expect(listJobFiles(db, jobId)).toEqual([]);
	});

	it('refuses a PNG named .wav with 415 saying what it is', async () => {
		const e = await refusal(upload([{ name: 'capture.wav', data: await photo('png') }]));
		expect(e.status).toBe(415);
		expect(e.message).toMatch(/capture\.wav is named as WAV but its content is PNG/);
		expect(listJobFiles(db, jobId)).toEqual([]);
	});

	it('refuses a file over the shop limit with 413 naming the limit', async () => {
		updateSettings(db, { jobFiles: { maxFileMiB: 1 } });
		const big = wav16(6, 48_000); // 6 s × 48 kHz × 2 ch × 2 B = 1,152,000 B = 1.1 MiB
		const e = await refusal(upload([{ name: 'long.wav', data: big }]));
		expect(e.status).toBe(413);
		expect(e.message).toMatch(/long\.wav is 1\.1 MiB, over the 1 MiB limit/);
		expect(e.message).toMatch(/per-file limit/);
	});

	it('refuses parts not named file with 400', async () => {
		const e = await refusal(upload([{ name: 'x.pdf', data: pdf(), field: 'attachment' }]));
		expect(e.status).toBe(400);
		expect(e.message).toMatch(/“attachment”/);
	});
});

describe('removing and snapshots', () => {
	it('lets the uploader or a supervisor remove a file (kept, marked, audited), not another technician', async () => {
		const [f] = await upload([{ name: 'a.pdf', data: pdf() }]);
		expect(() => removeJobFile(db, f.id, { id: 'u2', role: 'technician' })).toThrow(
			/uploaded this file or a supervisor/
		);
		removeJobFile(db, f.id, { id: 's1', role: 'supervisor' });
		expect(listJobFiles(db, jobId)).toEqual([]);
		const row = db.select().from(table.jobFiles).where(eq(table.jobFiles.id, f.id)).get()!;
		expect(row.removedBy).toBe('s1');
		expect(
			db.select().from(table.auditLog).where(eq(table.auditLog.action, 'file.removed')).get()?.actorId
		).toBe('s1');
		expect(() => db.$client.prepare('delete from job_files where id = ?').run(f.id)).toThrow(/kept/);
		await expect(readJobFile(db, store, f.id)).rejects.toThrow(/No such file/);
	});

	it('turns a WAV into a snapshot through the capture path, once', async () => {
		const [w] = await upload([{ name: 'after.wav', data: wav16(1, 48_000, 1000, 0.5) }]);
		const created = await snapshotFromFile(
			db,
			store,
			w.id,
			'u1',
			{ label: 'After, from file', stage: 'after' },
			async (input) => createSnapshot(db, input)
		);
		const snap = db.select().from(table.snapshots).where(eq(table.snapshots.id, created.id)).get()!;
		expect([snap.label, snap.stage, snap.jobId]).toEqual(['After, from file', 'after', jobId]);
		// The server's own analysis: the same 1 kHz tone.
		expect(created.results.channels[0].frequencyHz).toBeCloseTo(1000, 0);
		expect(getJobFile(db, w.id)!.snapshotId).toBe(created.id);
		const again = await refusal(
			snapshotFromFile(db, store, w.id, 'u1', { label: 'x', stage: 'after' }, async (i) =>
				createSnapshot(db, i)
			)
		);
		expect(again.status).toBe(409);
		const [p] = await upload([{ name: 'a.pdf', data: pdf() }]);
		const notWav = await refusal(
			snapshotFromFile(db, store, p.id, 'u1', { label: 'x', stage: 'after' }, async (i) =>
				createSnapshot(db, i)
			)
		);
		expect(notWav.status).toBe(400);
	});
});

describe("a model's documents (the notebook)", () => {
	it('attaches to a model key, not a job: listed with the model, no job lock, removable with an audit entry', async () => {
		// The job is signed off: a model's document does not care.
		db.update(table.jobs).set({ status: 'returned' }).where(eq(table.jobs.id, jobId)).run();
		const [doc] = await uploadModelFiles(db, {
			modelKey: 'corvane/ia1',
			userId: 'u1',
			body: multipart([{ name: 'IA-1 service manual.pdf', data: pdf() }]),
			boundary: BOUNDARY,
			store,
			analyse
		});
		expect(doc).toMatchObject({ jobId: null, modelKey: 'corvane/ia1', type: 'pdf' });
		expect(listModelFiles(db, 'corvane/ia1').map((f) => f.id)).toEqual([doc.id]);
		expect(listJobFiles(db, jobId)).toEqual([]);
		expect((await readJobFile(db, store, doc.id)).bytes.equals(pdf())).toBe(true);
		expect(() => removeJobFile(db, doc.id, { id: 'u2', role: 'technician' })).toThrow(/uploaded this file/);
		removeJobFile(db, doc.id, { id: 's1', role: 'supervisor' });
		expect(listModelFiles(db, 'corvane/ia1')).toEqual([]);
		const trail = db.select().from(table.auditLog).all();
		expect(trail.map((a) => [a.action, a.jobId, a.subject])).toEqual([
			['file.uploaded', null, `file #${doc.id} “IA-1 service manual.pdf” on model corvane/ia1`],
			['file.removed', null, `file #${doc.id} “IA-1 service manual.pdf” on model corvane/ia1`]
		]);
	});
});
