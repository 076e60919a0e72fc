// The soak API through its route handlers on an in-memory database: a repeated batch is stored
// once, a mixed batch keeps its valid readings and names the rest, and the guards answer first.
import { beforeAll, describe, expect, it, vi } from 'vitest';

vi.hoisted(() => {
	process.env.DATABASE_URL = ':memory:';
});

import { db, table } from '$lib/server/db';
import * as runsRoute from '../../src/routes/api/jobs/[id]/soak-runs/+server';
import * as runRoute from '../../src/routes/api/soak-runs/[id]/+server';
import * as readingsRoute from '../../src/routes/api/soak-runs/[id]/readings/+server';
import * as finishRoute from '../../src/routes/api/soak-runs/[id]/finish/+server';
import * as abortRoute from '../../src/routes/api/soak-runs/[id]/abort/+server';
import { callRoute, type RouteCall, type RouteUser } from './route-call';

const tech: RouteUser = { id: 'u-tech', email: 'tech@example.com', name: 'Tia Tech', role: 'technician' };

let ratedJob = 0;
let unratedJob = 0;

beforeAll(() => {
	db.insert(table.users)
		.values({ ...tech, passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'B. Customer' }).returning().get();
	const base = {
		customerId: c.id,
		category: 'power-amplifier' as const,
		make: 'Orrin',
		model: 'PA-2',
		complaint: 'runs hot'
	};
	ratedJob = db
		.insert(table.jobs)
		.values({ ...base, ratedPowerW: 80, ratedLoadOhms: 8 })
		.returning()
		.get().id;
	unratedJob = db.insert(table.jobs).values(base).returning().get().id;
});

/** A route call with a JSON body, as the demo technician unless the case says otherwise. */
const call = (
	handler: (event: never) => Response | Promise<Response>,
	opts: Omit<RouteCall, 'user' | 'json' | 'body'> & { user?: RouteUser | null; body?: unknown }
) => {
	const { body, user, ...rest } = opts;
	return callRoute(handler, { ...rest, json: body, user: user === undefined ? tech : user });
};

const T0 = Date.now();
const r = (probe: string, seq: number, celsius: unknown) => ({ probe, seq, t: T0 + seq, celsius });

describe('soak API', () => {
	let runId = 0;

	it('starts a run from { preset } alone, and 400s a job with no rating', async () => {
		const res = await call(runsRoute.POST, {
			method: 'POST',
			path: `/api/jobs/${ratedJob}/soak-runs`,
			params: { id: String(ratedJob) },
			body: { preset: 'eighth-power-60' }
		});
		expect(res.status).toBe(201);
		runId = res.body.id as number;
		const detail = await call(runRoute.GET, {
			path: `/api/soak-runs/${runId}`,
			params: { id: String(runId) }
		});
		expect(detail.status).toBe(200);
		const run = detail.body.run as Record<string, number>;
		expect(run.drivePowerW).toBeCloseTo(10, 9); // 80 W / 8
		expect(run.driveVrms).toBeCloseTo(8.944, 3); // √(10 W × 8 Ω) = √80
		expect(detail.body.readingCount).toBe(0);

		const noRating = await call(runsRoute.POST, {
			method: 'POST',
			path: `/api/jobs/${unratedJob}/soak-runs`,
			params: { id: String(unratedJob) },
			body: { preset: 'eighth-power-60' }
		});
		expect(noRating.status).toBe(400);
		expect(String(noRating.body.message)).toMatch(/no rated power/);
	});

	it('400s an accelerated clock not from the simulator or faster than ×120, storing nothing', async () => {
		const post = (bridge: Record<string, unknown>) =>
			call(runsRoute.POST, {
				method: 'POST',
				path: `/api/jobs/${unratedJob}/soak-runs`,
				params: { id: String(unratedJob) },
				body: {
					preset: 'custom',
					custom: { watts: 5, loadOhms: 8, frequencyHz: 1000, durationS: 600, channels: ['left'] },
					bridge
				}
			});
		const claimed = await post({ timeScale: 3600, source: 'sim', temps: 'sim' });
		expect(claimed.status).toBe(400);
		const hardware = await post({ timeScale: 60, source: 'cmd', temps: 'serial' });
		expect(hardware.status).toBe(400);
		expect(String(hardware.body.message)).toMatch(/only accepted from the bridge simulator/);
		const list = await call(runsRoute.GET, {
			path: `/api/jobs/${unratedJob}/soak-runs`,
			params: { id: String(unratedJob) }
		});
		expect(list.body.runs).toEqual([]);
	});

	it('guards: signed out 401, cross-origin 403, bad body 400, unknown run 404', async () => {
		const path = `/api/soak-runs/${runId}/readings`;
		const params = { id: String(runId) };
		expect(
			(await call(readingsRoute.POST, { method: 'POST', path, params, body: { readings: [] }, user: null }))
				.status
		).toBe(401);
		expect(
			(
				await call(readingsRoute.POST, {
					method: 'POST',
					path,
					params,
					body: { readings: [r('ambient', 1, 20)] },
					origin: 'http://evil.test'
				})
			).status
		).toBe(403);
		expect(
			(await call(readingsRoute.POST, { method: 'POST', path, params, body: { readings: 'many' } })).status
		).toBe(400);
		expect((await call(runRoute.GET, { path: '/api/soak-runs/9999', params: { id: '9999' } })).status).toBe(
			404
		);
		expect(
			(await call(runsRoute.GET, { path: '/api/jobs/9999/soak-runs', params: { id: '9999' } })).status
		).toBe(404);
	});

	it('stores the same batch once when it is posted twice', async () => {
		const path = `/api/soak-runs/${runId}/readings`;
		const params = { id: String(runId) };
		const body = {
			bootId: 'boot-1',
			readings: [r('heatsink-left', 101, 30.5), r('heatsink-right', 102, 30.9), r('transformer', 103, 27)]
		};
		const first = await call(readingsRoute.POST, { method: 'POST', path, params, body });
		expect(first).toMatchObject({ status: 200, body: { stored: 3, duplicates: 0, readingCount: 3 } });
		const second = await call(readingsRoute.POST, { method: 'POST', path, params, body });
		expect(second).toMatchObject({ status: 200, body: { stored: 0, duplicates: 3, readingCount: 3 } });
		const detail = await call(runRoute.GET, { path: `/api/soak-runs/${runId}`, params });
		expect(detail.body.readingCount).toBe(3);
		expect(detail.body.lastSeq).toBe(103);
	});

	it('a mixed batch: 400 naming the rejected readings, the valid rest stored', async () => {
		const path = `/api/soak-runs/${runId}/readings`;
		const params = { id: String(runId) };
		const body = {
			readings: [
				r('heatsink-left', 201, 31),
				r('heatsink-left', 202, 1200), // above 400 °C
				r('heatsink-right', 203, 'warm'), // not a number
				r('bias-resistor', 204, 40), // unknown probe
				r('ambient', 205, -60), // below −50 °C
				r('ambient', 206, 22)
			]
		};
		const res = await call(readingsRoute.POST, { method: 'POST', path, params, body });
		expect(res.status).toBe(400);
		expect(res.body.stored).toBe(2);
		expect((res.body.rejected as { seq: number }[]).map((x) => x.seq)).toEqual([202, 203, 204, 205]);
		expect(String(res.body.message)).toMatch(/4 reading\(s\) rejected; 2 new/);
		// Posting the same mixed batch again stores nothing new and still names the bad ones.
		const again = await call(readingsRoute.POST, { method: 'POST', path, params, body });
		expect(again).toMatchObject({ status: 400, body: { stored: 0, duplicates: 2 } });
		const after = await call(readingsRoute.GET, { path: `${path}?after=103`, params });
		expect((after.body.readings as { seq: number }[]).map((x) => x.seq)).toEqual([201, 206]);
		expect((await call(readingsRoute.GET, { path: `${path}?after=x`, params })).status).toBe(400);
	});

	it("a reading outside the run's time window is a 400 naming it; the job list stays quick and bounded", async () => {
		const path = `/api/soak-runs/${runId}/readings`;
		const params = { id: String(runId) };
		const decadesAhead = Date.now() + 30 * 365 * 86_400_000;
		const body = {
			readings: [
				{ probe: 'heatsink-left', seq: 251, t: 0, celsius: 30 }, // 1970: long before the run
				{ probe: 'heatsink-left', seq: 252, t: decadesAhead, celsius: 30 }, // decades ahead
				{ probe: 'heatsink-left', seq: 253, t: 1e300, celsius: 30 }, // not a time at all
				{ probe: 'heatsink-left', seq: 254, t: -1e300, celsius: 30 },
				r('heatsink-left', 255, 32) // inside: stored
			]
		};
		const res = await call(readingsRoute.POST, { method: 'POST', path, params, body });
		expect(res.status).toBe(400);
		expect(res.body.stored).toBe(1);
		const rejected = res.body.rejected as { seq: number; reason: string }[];
		expect(rejected.map((x) => x.seq)).toEqual([251, 252, 253, 254]);
		for (const x of rejected) expect(x.reason).toMatch(/outside the run's time window/);
		// The job's list reads the stored summary and chart: live counts, a thumbnail of at most 48 points.
		const list = await call(runsRoute.GET, {
			path: `/api/jobs/${ratedJob}/soak-runs`,
			params: { id: String(ratedJob) }
		});
		expect(list.status).toBe(200);
		const item = (list.body.runs as { readingCount: number; thumb: { minutes: number[] } }[])[0];
		expect(item.readingCount).toBe(6); // 3 + 2 + 1 stored by this suite so far
		expect(item.thumb.minutes.length).toBeLessThanOrEqual(48);
	});

	it('an abort naming a breach moment outside the run (±1e300) is a 400, and the run keeps running', async () => {
		const params = { id: String(runId) };
		for (const t of [1e300, -1e300, 0]) {
			const res = await call(abortRoute.POST, {
				method: 'POST',
				path: `/api/soak-runs/${runId}/abort`,
				params,
				body: {
					reason: 'Limit breached',
					breach: { kind: 'max-heatsink', probe: 'heatsink-left', t, value: 90, limit: 75, message: 'hot' }
				}
			});
			expect(res.status).toBe(400);
			expect(JSON.stringify(res.body)).toMatch(/breach/);
		}
		const detail = await call(runRoute.GET, { path: `/api/soak-runs/${runId}`, params });
		expect(detail.body.verdict).toBeNull();
	});

	it('a signed-off job refuses a new soak with 409', async () => {
		const c = db.insert(table.customers).values({ name: 'C. Customer' }).returning().get();
		const signedOff = db
			.insert(table.jobs)
			.values({
				customerId: c.id,
				category: 'power-amplifier',
				make: 'Orrin',
				model: 'PA-3',
				complaint: 'done',
				ratedPowerW: 80,
				ratedLoadOhms: 8,
				status: 'returned'
			})
			.returning()
			.get().id;
		const res = await call(runsRoute.POST, {
			method: 'POST',
			path: `/api/jobs/${signedOff}/soak-runs`,
			params: { id: String(signedOff) },
			body: { preset: 'eighth-power-60' }
		});
		expect(res.status).toBe(409);
		expect(
			db
				.select()
				.from(table.soakRuns)
				.all()
				.filter((x) => x.jobId === signedOff)
		).toHaveLength(0);
	});

	it('finish is refused before the duration; abort ends the run and later readings are refused', async () => {
		const params = { id: String(runId) };
		const early = await call(finishRoute.POST, {
			method: 'POST',
			path: `/api/soak-runs/${runId}/finish`,
			params
		});
		expect(early.status).toBe(409);
		const aborted = await call(abortRoute.POST, {
			method: 'POST',
			path: `/api/soak-runs/${runId}/abort`,
			params,
			body: { reason: 'Stopped by the technician' }
		});
		expect(aborted).toMatchObject({ status: 200, body: { verdict: 'aborted' } });
		const late = await call(readingsRoute.POST, {
			method: 'POST',
			path: `/api/soak-runs/${runId}/readings`,
			params,
			body: { readings: [r('ambient', 301, 22)] }
		});
		expect(late.status).toBe(409);
		const list = await call(runsRoute.GET, {
			path: `/api/jobs/${ratedJob}/soak-runs`,
			params: { id: String(ratedJob) }
		});
		const runs = list.body.runs as { verdict: string; maxC: Record<string, number> }[];
		expect(runs[0].verdict).toBe('aborted');
		expect(runs[0].maxC['heatsink-left']).toBe(32);
	});
});
