// The compare API through its route handler on an in-memory database: the picked snapshots come
// back in full, oldest first, with the figures the page compares; a bad pick (malformed, none, more
// than six, another job's snapshot) is a 400 that says what is allowed, and nothing needs a role.
import { beforeAll, describe, expect, it, vi } from 'vitest';

vi.hoisted(() => {
	process.env.DATABASE_URL = ':memory:';
});

import { db, table } from '$lib/server/db';
import { encodeWav } from '$lib/dsp';
import { createSnapshot } from '$lib/server/snapshots';
import { createLimitProfile } from '$lib/server/limit-profiles';
import { checkRows, figureRows, flippedChecks } from '$lib/compare';
import * as compareRoute from '../../src/routes/api/jobs/[id]/compare/+server';
import { callRoute, type RouteUser } from './route-call';

const tech: RouteUser = { id: 'u-cmp', email: 'cmp@example.com', name: 'Cass Compare', role: 'technician' };
let jobId = 0;
let otherJobId = 0;
const ids: number[] = [];
let foreignId = 0;

/** A 1 kHz tone at `amp` of full scale with `h3` of third harmonic (re the fundamental). */
function tone(n: number, amp: number, h3: number, rate = 48000): Float32Array {
	const out = new Float32Array(n);
	for (let i = 0; i < n; i++) {
		const w = (2 * Math.PI * 1000 * i) / rate;
		out[i] = amp * (Math.sin(w) + h3 * Math.sin(3 * w));
	}
	return out;
}

beforeAll(() => {
	db.insert(table.users)
		.values({ ...tech, passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'C. Customer' }).returning().get();
	const job = () =>
		db
			.insert(table.jobs)
			.values({
				customerId: c.id,
				category: 'integrated-amplifier',
				make: 'Velmora',
				model: 'VA-9',
				complaint: 'distorts'
			})
			.returning()
			.get().id;
	jobId = job();
	otherJobId = job();
	const profile = createLimitProfile(
		db,
		{
			name: 'Compare test profile',
			conditions: { generatorFrequencyHz: 1000 },
			limits: [{ metric: 'thdPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' }]
		},
		tech.id
	);
	const snap = (job: number, label: string, stage: 'before' | 'after', h3: number) =>
		createSnapshot(db, {
			jobId: job,
			userId: tech.id,
			wav: encodeWav([tone(16384, 0.4, h3), tone(16384, 0.4, h3)], 48000),
			meta: {
				label,
				stage,
				profileId: profile.id,
				fullScaleVolts: 2,
				loadOhms: 8,
				analysis: { fftSize: 16384 }
			}
		}).id;
	// 1 % third harmonic before, 0.01 % after: THD 1 % → 0.01 %, a −40 dB change (20·lg(0.01/1)).
	ids.push(snap(jobId, 'distorting', 'before', 0.01));
	ids.push(snap(jobId, 'repaired', 'after', 0.0001));
	foreignId = snap(otherJobId, 'elsewhere', 'before', 0);
});

const get = (query: string, job = jobId, user: RouteUser | null = tech) =>
	callRoute(compareRoute.GET, {
		path: `/api/jobs/${job}/compare${query}`,
		params: { id: String(job) },
		user
	});

describe('GET /api/jobs/{id}/compare', () => {
	it('answers the picked snapshots in full, oldest first, whatever order they were picked in', async () => {
		const res = await get(`?s=${ids[1]},${ids[0]}`);
		expect(res.status).toBe(200);
		const snaps = res.body.snapshots as { id: number; label: string; spectrum: { channels: unknown[] } }[];
		expect(snaps.map((s) => s.id)).toEqual([ids[0], ids[1]]);
		expect(snaps[0].spectrum.channels).toHaveLength(2);

		// The comparison the page draws from this answer: THD falls from 1 % to 0.01 %.
		const rows = figureRows(snaps as never);
		const thd = rows.find((r) => r.id === 'ch0:thdPercent')!;
		expect(thd.values[0].value!).toBeCloseTo(1, 2);
		expect(thd.values[1].value!).toBeCloseTo(0.01, 3);
		// % points: plain subtraction, about −0.99
		expect(thd.changes[1]!.value!).toBeCloseTo(-0.99, 2);
		expect(thd.changes[1]!.verdict).toBe('better');
		const thdDb = rows.find((r) => r.id === 'ch0:thdDb')!;
		// 20·lg(0.0001/0.01) = −40 dB (IEC 60027-3 field ratio)
		expect(thdDb.changes[1]!.value!).toBeCloseTo(-40, 1);
		// Same level and load in both: power unchanged, P = V²/R with V = 0.4·2/√2 V into 8 Ω = 0.04 W.
		const power = rows.find((r) => r.id === 'ch0:powerW')!;
		expect(power.values[0].value!).toBeCloseTo((0.4 * 2) ** 2 / 2 / 8, 3);
		expect(power.changes[1]!.verdict).toBe('same');
		// THD ≤ 0.1 % failed before and passes after, on each channel.
		const flipped = flippedChecks(checkRows(snaps as never));
		expect(flipped.map((r) => [r.text, r.flips[1]])).toEqual([
			['THD (left) ≤ 0.1 %', 'fail→pass'],
			['THD (right) ≤ 0.1 %', 'fail→pass']
		]);
	});

	it('refuses another job’s snapshot with a 400 naming it', async () => {
		const res = await get(`?s=${ids[0]},${foreignId}`);
		expect(res.status).toBe(400);
		expect(res.body.message).toContain(`Snapshot ${foreignId} is not part of job ${jobId}`);
		expect(res.body.issues).toEqual([
			{ path: 's', message: `snapshot ${foreignId} is not a snapshot of job ${jobId}` }
		]);
	});

	it('refuses more than six, none, and malformed ids with a 400 that says what is allowed', async () => {
		const seven = await get('?s=1,2,3,4,5,6,7');
		expect(seven.status).toBe(400);
		expect(JSON.stringify(seven.body.issues)).toContain('at most 6 snapshots');
		const none = await get('');
		expect(none.status).toBe(400);
		expect(JSON.stringify(none.body.issues)).toContain('s is required');
		const empty = await get('?s=');
		expect(empty.status).toBe(400);
		expect(JSON.stringify(empty.body.issues)).toContain('pick at least one');
		const bad = await get('?s=1,abc');
		expect(bad.status).toBe(400);
		expect(JSON.stringify(bad.body.issues)).toContain('ids separated by commas');
	});

	it('is 404 for no such job and 401 signed out', async () => {
		expect((await get(`?s=${ids[0]}`, 999_999)).status).toBe(404);
		expect((await get(`?s=${ids[0]}`, jobId, null)).status).toBe(401);
	});
});

describe('the compare page load', () => {
	const load = async (query: string, job = jobId) => {
		const { load: pageLoadFn } = await import('../../src/routes/jobs/[id]/compare/+page.server');
		const url = new URL(`/jobs/${job}/compare${query}`, 'http://bench.test');
		const event = { url, params: { id: String(job) }, locals: { user: tech, session: null } };
		try {
			return { status: 200, data: (await pageLoadFn(event as never)) as Record<string, unknown> };
		} catch (e) {
			const err = e as { status?: number; body?: { message?: string } };
			if (typeof err.status === 'number') return { status: err.status, message: err.body?.message };
			throw e;
		}
	};

	it('lists the job’s snapshots and the picks, and refuses another job’s with a 400', async () => {
		const ok = await load(`?s=${ids[0]},${ids[1]}`);
		expect(ok.status).toBe(200);
		expect(ok.data!.picked).toEqual([ids[0], ids[1]]);
		expect((ok.data!.snapshots as { id: number }[]).map((s) => s.id).sort()).toEqual([...ids].sort());
		const foreign = await load(`?s=${ids[0]},${foreignId}`);
		expect(foreign.status).toBe(400);
		expect(foreign.message).toContain(`Snapshot ${foreignId} is not part of job ${jobId}`);
		expect((await load('?s=1,2,3,4,5,6,7')).status).toBe(400);
		expect((await load('?s=1;2')).status).toBe(400);
		// No picks yet: the page opens to let them be made.
		expect((await load('')).status).toBe(200);
	});
});
