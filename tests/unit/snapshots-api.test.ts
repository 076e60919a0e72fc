// The snapshot API through its route handlers on an in-memory database: a multipart capture is
// analysed (on the worker pool) and answered with 201, bad parts are 400s that name the part,
// oversize and storage caps are 413, a full pool is 503 + Retry-After before the body is read, a
// signed-off job is 409, and the guards (sign-in, same origin, content type) answer before anything
// is stored. The worst legal upload does not hold up another user's request.
import { rmSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

// A database file, not :memory:, so uploads are written the way the server writes them: on a
// worker thread's own connection to the file.
const DB_FILE = vi.hoisted(() => {
	const file = `${process.env.TMPDIR ?? '/tmp'}/benchlight-snapshots-api-${process.pid}-${Date.now()}.db`;
	process.env.DATABASE_URL = file;
	return file;
});

import { sql } from 'drizzle-orm';
import { db, table } from '$lib/server/db';
import { encodeWav } from '$lib/dsp';
import { analysisPool, type Reservation } from '$lib/server/analysis-pool';
import { updateSettings } from '$lib/server/settings';
import { snapshotStorageUse } from '$lib/server/snapshots';
import { ANALYSIS_MAX_SECONDS, STEADINESS_MAX_SECONDS } from '$lib/server/snapshot-analysis';
import { DEFAULT_SNAPSHOT_STORAGE } from '$lib/schemas/settings';
import * as jobsRoute from '../../src/routes/api/jobs/+server';
import * as listRoute from '../../src/routes/api/jobs/[id]/snapshots/+server';
import * as oneRoute from '../../src/routes/api/snapshots/[id]/+server';
import * as audioRoute from '../../src/routes/api/snapshots/[id]/audio/+server';
import { callRoute, TEST_ORIGIN, type RouteCall, type RouteUser } from './route-call';

const tech: RouteUser = { id: 'u-snap', email: 'snap@example.com', name: 'Sam Snap', role: 'technician' };
let jobId = 0;
let customerId = 0;

/** A job of its own for a case, so stored audio of one case does not count against another. */
function newJob(status: 'received' | 'approved' | 'returned' = 'received'): number {
	return db
		.insert(table.jobs)
		.values({ customerId, category: 'receiver', make: 'Velmora', model: 'R-40', complaint: 'hum', status })
		.returning()
		.get().id;
}

afterAll(async () => {
	await analysisPool().close();
	db.$client.close();
	for (const suffix of ['', '-wal', '-shm']) rmSync(DB_FILE + suffix, { force: true });
});

beforeAll(() => {
	db.insert(table.users)
		.values({ ...tech, passwordHash: 'x' })
		.run();
	customerId = db.insert(table.customers).values({ name: 'D. Customer' }).returning().get().id;
	jobId = newJob();
});

/**
 * Integer PCM WAV (8-bit unsigned or 16-bit signed, little-endian) of a 0.5-peak 1 kHz sine, filled
 * up to `bytes`, written here byte by byte (not with the code under test).
 */
function pcmWav(channels: number, rateHz: number, bits: 8 | 16, bytes: number, freqHz = 1000): Uint8Array {
	const frameBytes = (bits / 8) * channels;
	const n = Math.floor((bytes - 44) / frameBytes);
	const buf = new Uint8Array(44 + n * frameBytes);
	const dv = new DataView(buf.buffer);
	const ascii = (at: number, s: string) => [...s].forEach((c, i) => (buf[at + i] = c.charCodeAt(0)));
	ascii(0, 'RIFF');
	dv.setUint32(4, 36 + n * frameBytes, true);
	ascii(8, 'WAVE');
	ascii(12, 'fmt ');
	dv.setUint32(16, 16, true);
	dv.setUint16(20, 1, true); // integer PCM
	dv.setUint16(22, channels, true);
	dv.setUint32(24, rateHz, true);
	dv.setUint32(28, rateHz * frameBytes, true);
	dv.setUint16(32, frameBytes, true);
	dv.setUint16(34, bits, true);
	ascii(36, 'data');
	dv.setUint32(40, n * frameBytes, true);
	let at = 44;
	for (let i = 0; i < n; i++) {
		// Phase reduced exactly in integers: Math.sin of huge arguments is slow.
		const v = 0.5 * Math.sin((2 * Math.PI * ((freqHz * i) % rateHz)) / rateHz);
		for (let c = 0; c < channels; c++) {
			if (bits === 8) buf[at++] = Math.round(v * 127) + 128;
			else {
				dv.setInt16(at, Math.round(v * 32767), true);
				at += 2;
			}
		}
	}
	return buf;
}

/** The largest upload the server accepts, minus room for the form's own bytes. */
const LARGEST_WAV_BYTES = 32 * 1024 * 1024 - 4096;
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

function sine(n: number, amp = 0.4, f = 1000, rate = 48000): Float32Array {
	const out = new Float32Array(n);
	for (let i = 0; i < n; i++) out[i] = amp * Math.sin((2 * Math.PI * f * i) / rate);
	return out;
}

/** A route call as the demo technician unless the case says otherwise. */
const call = (
	handler: (event: never) => Response | Promise<Response>,
	opts: Omit<RouteCall, 'user'> & { user?: RouteUser | null }
) => callRoute(handler, { ...opts, user: opts.user === undefined ? tech : opts.user });

function form(wav: BlobPart | null, meta: string | null): FormData {
	const f = new FormData();
	if (wav !== null) f.set('samples', new Blob([wav], { type: 'audio/wav' }), 'capture.wav');
	if (meta !== null) f.set('meta', meta);
	return f;
}

const count = () => (db.get(sql`select count(*) as n from snapshots`) as { n: number }).n;
const post = (body: FormData, extra: Partial<Parameters<typeof call>[1]> & { job?: number } = {}) => {
	const { job = jobId, ...rest } = extra;
	return call(listRoute.POST, {
		method: 'POST',
		path: `/api/jobs/${job}/snapshots`,
		params: { id: String(job) },
		body,
		...rest
	});
};
const metaOf = (extra: Record<string, unknown> = {}) =>
	JSON.stringify({ label: 'x', stage: 'after', ...extra });

describe('snapshot API', () => {
	const wav = encodeWav([sine(16384), sine(16384, 0.2)], 48000);

	it('captures: 201 with the server’s results, then lists, reads and serves the audio', async () => {
		const res = await post(
			form(
				wav as BlobPart,
				JSON.stringify({
					label: 'first light',
					stage: 'before',
					fullScaleVolts: 2,
					analysis: { fftSize: 16384 }
				})
			)
		);
		expect(res.status).toBe(201);
		const id = res.body.id as number;
		expect(res.body.verdict).toBe('none');
		const channels = (res.body.results as { channels: { levelVrms: number }[] }).channels;
		// 0.4 × 2 V peak → 0.8/√2 V rms
		expect(channels[0].levelVrms).toBeCloseTo(0.8 / Math.SQRT2, 4);
		expect(channels[1].levelVrms).toBeCloseTo(0.4 / Math.SQRT2, 4);

		const list = await call(listRoute.GET, {
			path: `/api/jobs/${jobId}/snapshots`,
			params: { id: String(jobId) }
		});
		expect(list.status).toBe(200);
		expect(
			(list.body.snapshots as { id: number; label: string }[]).map((s) => [s.id, s.label])
		).toContainEqual([id, 'first light']);

		const one = await call(oneRoute.GET, { path: `/api/snapshots/${id}`, params: { id: String(id) } });
		expect(one.status).toBe(200);
		expect(one.body.createdByName).toBe('Sam Snap');

		const audio = await call(audioRoute.GET, {
			path: `/api/snapshots/${id}/audio`,
			params: { id: String(id) }
		});
		expect(audio.status).toBe(200);
		expect(audio.res?.headers.get('content-type')).toBe('audio/wav');
		// A shared bench PC must not keep job audio in its cache after sign-out.
		expect(audio.res?.headers.get('cache-control')).toBe('private, no-store');
		const bytes = new Uint8Array(await audio.res!.arrayBuffer());
		expect(bytes).toEqual(wav);
	});

	it('answers bad parts with 400 naming the part, oversize with 413, and stores nothing', async () => {
		const before = count();
		const meta = JSON.stringify({ label: 'x', stage: 'after' });
		const notWav = await post(form('just text', meta));
		expect(notWav.status).toBe(400);
		expect(notWav.body.message).toMatch(/^samples: not a WAV/);
		const badMeta = await post(form(wav as BlobPart, JSON.stringify({ label: '', stage: 'after' })));
		expect(badMeta.status).toBe(400);
		expect(badMeta.body.message).toMatch(/^meta/);
		expect(badMeta.body.issues).toEqual([{ path: 'meta.label', message: 'Give the snapshot a label' }]);
		const noProfile = await post(
			form(wav as BlobPart, JSON.stringify({ label: 'x', stage: 'after', profileId: 4242 }))
		);
		expect(noProfile.status).toBe(400);
		expect(noProfile.body.message).toMatch(/meta.profileId: no limit profile/);
		const missing = await post(form(null, meta));
		expect(missing.status).toBe(400);
		expect(missing.body.message).toMatch(/^samples/);
		const big = await post(form(new Uint8Array(32 * 1024 * 1024 + 1), meta));
		expect(big.status).toBe(413);
		expect(count()).toBe(before);
	});

	it('guards: signed out 401, cross-origin 403, not multipart 415, unknown job 404', async () => {
		const meta = JSON.stringify({ label: 'x', stage: 'after' });
		expect((await post(form(wav as BlobPart, meta), { user: null })).status).toBe(401);
		expect((await post(form(wav as BlobPart, meta), { origin: 'http://evil.test' })).status).toBe(403);
		expect((await post(form(wav as BlobPart, meta), { origin: null })).status).toBe(403);
		const json = await call(listRoute.POST, {
			method: 'POST',
			path: `/api/jobs/${jobId}/snapshots`,
			params: { id: String(jobId) },
			body: meta,
			contentType: 'application/json'
		});
		expect(json.status).toBe(415);
		const nojob = await call(listRoute.POST, {
			method: 'POST',
			path: '/api/jobs/999999/snapshots',
			params: { id: '999999' },
			body: form(wav as BlobPart, meta)
		});
		expect(nojob.status).toBe(404);
		expect(
			(await call(oneRoute.GET, { path: '/api/snapshots/999999', params: { id: '999999' } })).status
		).toBe(404);
		expect(
			(await call(oneRoute.GET, { path: '/api/snapshots/1', params: { id: '1' }, user: null })).status
		).toBe(401);
	});

	it('a signed-off job refuses new snapshots with 409 and stores nothing', async () => {
		for (const status of ['approved', 'returned'] as const) {
			const locked = newJob(status);
			const before = count();
			const res = await post(form(wav as BlobPart, metaOf()), { job: locked });
			expect(res.status).toBe(409);
			expect(res.body.message).toMatch(/signed off/i);
			expect(count()).toBe(before);
		}
	});

	it('keeps the stimulus with the conditions: default tone, as sent, and 400 listing the allowed values', async () => {
		const plain = await post(form(wav as BlobPart, metaOf()));
		expect(plain.status).toBe(201);
		expect((plain.body.results as { conditions: { stimulus: string } }).conditions.stimulus).toBe('tone');
		const imd = await post(form(wav as BlobPart, metaOf({ stimulus: 'smpte' })));
		expect(imd.status).toBe(201);
		const one = await call(oneRoute.GET, {
			path: `/api/snapshots/${imd.body.id}`,
			params: { id: String(imd.body.id) }
		});
		expect((one.body.results as { conditions: { stimulus: string } }).conditions.stimulus).toBe('smpte');
		expect((one.body.settings as { stimulus: string }).stimulus).toBe('smpte');
		const bad = await post(form(wav as BlobPart, metaOf({ stimulus: 'noise' })));
		expect(bad.status).toBe(400);
		const issue = (bad.body.issues as { path: string; message: string }[]).find(
			(i) => i.path === 'meta.stimulus'
		);
		for (const allowed of ['tone', 'none', 'smpte', 'twin-tone']) expect(issue?.message).toContain(allowed);
	});

	it('refuses sample rates outside 8 kHz–768 kHz with a 400 that states the range', async () => {
		const before = count();
		for (const rateHz of [4000, 1_000_000]) {
			const res = await post(form(pcmWav(1, rateHz, 16, 64 * 1024) as BlobPart, metaOf()));
			expect(res.status).toBe(400);
			expect(res.body.message).toContain(`${rateHz} Hz`);
			expect(res.body.message).toContain('8 kHz to 768 kHz');
		}
		// The edges themselves are allowed.
		for (const rateHz of [8000, 768_000]) {
			const res = await post(
				form(pcmWav(1, rateHz, 16, 64 * 1024, 1000) as BlobPart, metaOf({ analysis: { fftSize: 4096 } }))
			);
			expect(res.status).toBe(201);
		}
		expect(count()).toBe(before + 2);
	});

	it('an 8-bit file of the largest size is analysed from its newest seconds, and measured right', async () => {
		// 8-bit mono at 8 kHz: 32 MiB is about 70 minutes of audio.
		const big = pcmWav(1, 8000, 8, LARGEST_WAV_BYTES);
		const res = await post(form(big as BlobPart, metaOf({ analysis: { fftSize: 16384, averages: 64 } })), {
			job: newJob()
		});
		expect(res.status).toBe(201);
		const r = res.body.results as {
			capturedSamples: number;
			analysedSamples: number;
			channels: { levelVrms: number; frequencyHz: number }[];
			steadiness: { durationS: number }[];
		};
		expect(r.capturedSamples).toBe(big.length - 44);
		// At most ANALYSIS_MAX_SECONDS of audio averaged (whole 16k frames), however long the file.
		expect(r.analysedSamples).toBe(Math.floor((ANALYSIS_MAX_SECONDS * 8000) / 16384) * 16384);
		expect(r.steadiness[0].durationS).toBeLessThanOrEqual(STEADINESS_MAX_SECONDS);
		// Plain physics: a sine of peak 0.5 (quantised to 63.5/127.5 of full scale by 8-bit offset
		// binary, within one step of 1/128) has rms peak/√2.
		expect(r.channels[0].levelVrms).toBeCloseTo(0.5 / Math.SQRT2, 2);
		expect(r.channels[0].frequencyHz).toBeCloseTo(1000, 0);
	});

	it('caps stored audio per job and per shop with a 413 that names the cap and the use', async () => {
		const job = newJob();
		const file = pcmWav(1, 8000, 16, 600 * 1024);
		try {
			updateSettings(db, { snapshotStorage: { perJobMiB: 1, perShopGiB: 20 } });
			expect((await post(form(file as BlobPart, metaOf()), { job })).status).toBe(201);
			const before = count();
			const perJob = await post(form(file as BlobPart, metaOf()), { job });
			expect(perJob.status).toBe(413);
			expect(perJob.body.message).toMatch(/this job's snapshot audio cap is 1 MiB and 0\.6 MiB is stored/);
			expect(count()).toBe(before);

			// A shop cap just above what is stored now: the next upload passes it.
			const { shopBytes } = snapshotStorageUse(db, job);
			const perShopGiB = Math.ceil((shopBytes + 1) / (0.01 * 1024 ** 3)) / 100;
			updateSettings(db, { snapshotStorage: { perJobMiB: 1000, perShopGiB } });
			const bigger = pcmWav(1, 8000, 16, 11 * 1024 * 1024);
			const perShop = await post(form(bigger as BlobPart, metaOf()), { job: newJob() });
			expect(perShop.status).toBe(413);
			expect(perShop.body.message).toContain(`the shop's snapshot audio cap is ${perShopGiB} GiB`);
			expect(perShop.body.message).toContain(`${(shopBytes / 1024 ** 3).toFixed(2)} GiB is stored`);
			expect(count()).toBe(before);
		} finally {
			updateSettings(db, { snapshotStorage: DEFAULT_SNAPSHOT_STORAGE });
		}
		// The caps themselves are validated like any setting: every problem at once, with the range.
		let refusal: { status?: number; issues?: { path: string; message: string }[] } = {};
		try {
			updateSettings(db, { snapshotStorage: { perJobMiB: 0.5, perShopGiB: 0 } });
		} catch (e) {
			refusal = e as typeof refusal;
		}
		expect(refusal.status).toBe(400);
		expect(new Set(refusal.issues?.map((i) => i.path))).toEqual(
			new Set(['snapshotStorage.perJobMiB', 'snapshotStorage.perShopGiB'])
		);
		expect(refusal.issues?.map((i) => i.message)).toContain('Shop snapshot storage is at least 0.01 GiB');
	});

	it('a full analysis pool answers 503 with Retry-After before reading the body', async () => {
		const pool = analysisPool();
		const held: Reservation[] = [];
		try {
			while (pool.reserved < pool.threads + pool.maxQueued) held.push(pool.reserve());
			let pulled = false;
			// highWaterMark 0: the stream is pulled only when someone reads the body.
			const body = new ReadableStream<Uint8Array>(
				{
					pull(c) {
						pulled = true;
						c.close();
					}
				},
				{ highWaterMark: 0 }
			);
			const url = new URL(`/api/jobs/${jobId}/snapshots`, TEST_ORIGIN);
			const request = new Request(url, {
				method: 'POST',
				headers: { origin: TEST_ORIGIN, 'content-type': 'multipart/form-data; boundary=x' },
				body,
				duplex: 'half'
			} as RequestInit);
			const res = await listRoute.POST({
				request,
				url,
				params: { id: String(jobId) },
				locals: { user: tech, session: null }
			} as never);
			expect(res.status).toBe(503);
			expect(Number(res.headers.get('retry-after'))).toBeGreaterThan(0);
			expect(((await res.json()) as { message: string }).message).toMatch(/send this one again in \d+ s/);
			expect(pulled).toBe(false);
		} finally {
			for (const r of held) r.release();
		}
		// With room again, the same upload goes through.
		expect((await post(form(wav as BlobPart, metaOf()))).status).toBe(201);
		expect(pool.reserved).toBe(0);
	});

	it('the worst legal upload is analysed off the request thread: /api/jobs answers meanwhile', async () => {
		// 768 kHz (the highest rate allowed) stereo 16-bit at the size cap, analysed with the smallest
		// FFT: the most analyser runs any legal upload asks for.
		const worst = pcmWav(2, 768_000, 16, LARGEST_WAV_BYTES);
		const job = newJob();
		const list = () => call(jobsRoute.GET, { path: '/api/jobs', params: {} });
		expect((await list()).status).toBe(200); // warm: statements compiled, modules loaded

		const pool = analysisPool();
		let uploadDoneAt = 0;
		const upload = post(form(worst as BlobPart, metaOf({ analysis: { fftSize: 4096 } })), { job }).then(
			(r) => {
				uploadDoneAt = performance.now();
				return r;
			}
		);
		while (pool.running === 0 && uploadDoneAt === 0) await sleep(2);
		const sentAt = performance.now();
		const jobs = await list();
		const jobsDoneAt = performance.now();
		const res = await upload;

		expect(res.status).toBe(201);
		expect(jobs.status).toBe(200);
		// Not blocked: the list answered while the upload was still being analysed, in a small part of
		// the time the analysis took after it was sent (relative, not a wall-clock limit).
		expect(jobsDoneAt).toBeLessThan(uploadDoneAt);
		expect(jobsDoneAt - sentAt).toBeLessThan((uploadDoneAt - sentAt) / 5);
		// And the work was bounded by seconds of audio at this rate.
		const r = res.body.results as {
			analysedSamples: number;
			steadiness: { durationS: number; frames: number }[];
		};
		expect(r.analysedSamples).toBeLessThanOrEqual(ANALYSIS_MAX_SECONDS * 768_000);
		for (const s of r.steadiness) expect(s.durationS).toBeLessThanOrEqual(STEADINESS_MAX_SECONDS);
	});
});
