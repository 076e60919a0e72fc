// The snapshot API through its route handlers on an in-memory database: a multipart capture is
// analysed and answered with 201, bad parts are 400s that name the part, oversize is 413, and the
// guards (sign-in, same origin, content type) answer before anything is stored.
import { beforeAll, describe, expect, it, vi } from 'vitest';

vi.hoisted(() => {
	process.env.DATABASE_URL = ':memory:';
});

import { sql } from 'drizzle-orm';
import { db, table } from '$lib/server/db';
import { encodeWav } from '$lib/dsp';
import * as listRoute from '../../src/routes/api/jobs/[id]/snapshots/+server';
import * as oneRoute from '../../src/routes/api/snapshots/[id]/+server';
import * as audioRoute from '../../src/routes/api/snapshots/[id]/audio/+server';
import { callRoute, type RouteCall, type RouteUser } from './route-call';

const tech: RouteUser = { id: 'u-snap', email: 'snap@example.com', name: 'Sam Snap', role: 'technician' };
let jobId = 0;

beforeAll(() => {
	db.insert(table.users)
		.values({ ...tech, passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'D. Customer' }).returning().get();
	jobId = db
		.insert(table.jobs)
		.values({ customerId: c.id, category: 'receiver', make: 'Velmora', model: 'R-40', complaint: 'hum' })
		.returning()
		.get().id;
});

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
const post = (body: FormData, extra: Partial<Parameters<typeof call>[1]> = {}) =>
	call(listRoute.POST, {
		method: 'POST',
		path: `/api/jobs/${jobId}/snapshots`,
		params: { id: String(jobId) },
		body,
		...extra
	});

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
});
