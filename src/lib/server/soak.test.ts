// Sources named beside the checks are described in tests/REFERENCES.md § Heat soak.
// The soak service on an in-memory database: runs from presets and the shop's limits,
// idempotent and partly-rejecting reading batches, and the server's own verdict.
import { beforeEach, describe, expect, it } from 'vitest';
import { eq } from 'drizzle-orm';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import {
	abortRun,
	addEvents,
	addReadings,
	createRun,
	finishRun,
	getRunDetail,
	listRuns,
	OVERDUE_GRACE_MS,
	readingsAfter,
	readingsTail,
	runningRunId
} from './soak';
import { DomainError } from './errors';
import { acceleratedLabel } from '$lib/soak/verdict';
import { DEFAULT_SOAK_LIMITS } from '$lib/schemas/settings';
import { copyFileSync, existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

let db: Db;
let ratedJob: number;
let unratedJob: number;
const T0 = 1_800_000_000_000;
/** The server's clock in these tests: a day after T0, so every reading below lies in the past. */
const NOW = T0 + 86_400_000;
const add = (d: Db, id: number, readings: readonly unknown[], bootId?: string, nowMs = NOW) =>
	addReadings(d, id, readings, bootId, nowMs);

beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values({ id: 'u1', email: 't@example.com', name: 'Tess Tech', role: 'technician', passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'A. Customer' }).returning().get();
	const base = {
		customerId: c.id,
		category: 'integrated-amplifier' as const,
		make: 'Vellum',
		model: 'IA-1',
		complaint: 'hum'
	};
	ratedJob = db
		.insert(table.jobs)
		.values({ ...base, ratedPowerW: 100, ratedLoadOhms: 8 })
		.returning()
		.get().id;
	unratedJob = db.insert(table.jobs).values(base).returning().get().id;
});

function reading(probe: string, seq: number, celsius: number, tOffsetMs = (seq - 1000) * 1000) {
	return { probe, seq, t: T0 + tOffsetMs, celsius };
}

describe('creating a run', () => {
	it('takes the rating and the shop default limits from { preset } alone', () => {
		db.insert(table.settings)
			.values({
				key: 'soakDefaultLimits',
				value: { ...DEFAULT_SOAK_LIMITS, maxHeatsinkC: 65, maxDiffC: 6, thdnCeilingDb: -50 }
			})
			.run();
		const { id } = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0);
		const d = getRunDetail(db, id);
		expect(d.run.drivePowerW).toBeCloseTo(12.5, 9); // 100 W / 8
		expect(d.run.driveVrms).toBeCloseTo(10, 9); // √(12.5 × 8)
		expect(d.run.durationS).toBe(3600);
		expect(d.run.status).toBe('running');
		expect(d.run.createdByName).toBe('Tess Tech');
		expect(d.limits).toEqual({
			...DEFAULT_SOAK_LIMITS,
			maxHeatsinkC: 65,
			maxDiffC: 6,
			thdnCeilingDb: -50,
			riseWindowS: 60
		});
		// A run may change one limit and keep the shop's others.
		const other = createRun(db, unratedJob, 'u1', {
			preset: 'custom',
			custom: { watts: 5, loadOhms: 8, frequencyHz: 1000, durationS: 600, channels: ['left', 'right'] },
			limits: { maxRiseCPerMin: 6 }
		});
		expect(getRunDetail(db, other.id).limits).toEqual({ ...d.limits, maxRiseCPerMin: 6 });
		expect(d.run.probes).toEqual(['heatsink-left', 'heatsink-right', 'transformer', 'ambient']);
		expect(d.readingCount).toBe(0);
		expect(d.verdict).toBeNull();
	});

	it('refuses a preset on a job with no rating, but takes a custom drive', () => {
		expect(() => createRun(db, unratedJob, 'u1', { preset: 'eighth-power-60' })).toThrow(DomainError);
		const { id } = createRun(db, unratedJob, 'u1', {
			preset: 'custom',
			custom: { volts: 20, loadOhms: 8, frequencyHz: 1000, durationS: 600, channels: ['left'] },
			limits: { maxHeatsinkC: 60 }
		});
		const d = getRunDetail(db, id);
		expect(d.run.drivePowerW).toBeCloseTo(50, 9); // 20² / 8
		expect(d.run.channels).toEqual(['left']);
		expect(d.limits.maxHeatsinkC).toBe(60);
	});

	it('refuses a preset while the rating is music power or a total, and asks first on an unrestored unit', () => {
		const set = (patch: Partial<typeof table.jobs.$inferInsert>) =>
			db.update(table.jobs).set(patch).where(eq(table.jobs.id, ratedJob)).run();
		set({ ratedPowerBasis: 'music' });
		expect(() => createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' })).toThrow(/music-power/);
		set({ ratedPowerBasis: 'total' });
		expect(() => createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' })).toThrow(
			/total for all channels/
		);
		// A custom drive states its own volts or watts, so the rating's basis does not set it.
		const custom = createRun(db, ratedJob, 'u1', {
			preset: 'custom',
			custom: { volts: 10, loadOhms: 8, frequencyHz: 1000, durationS: 600, channels: ['left'] }
		});
		abortRun(db, custom.id, { reason: 'test' });
		set({ ratedPowerBasis: 'continuous-per-channel', unrestored: true });
		expect(() => createRun(db, ratedJob, 'u1', { preset: 'third-power-60' })).toThrow(/confirm/i);
		expect(createRun(db, ratedJob, 'u1', { preset: 'third-power-60', confirmHeat: true }).id).toBeGreaterThan(
			0
		);
	});

	it('allows one running soak per job and 404s an unknown job', () => {
		createRun(db, ratedJob, 'u1', { preset: 'third-power-60' });
		expect(() => createRun(db, ratedJob, 'u1', { preset: 'third-power-60' })).toThrow(/still running/);
		expect(() => createRun(db, 9999, 'u1', { preset: 'third-power-60' })).toThrow(/No such job/);
	});
});

describe('readings', () => {
	it('stores the same batch once when it is posted twice', () => {
		const { id } = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0);
		const batch = [
			reading('heatsink-left', 1001, 30),
			reading('heatsink-right', 1002, 31),
			reading('transformer', 1003, 28)
		];
		const first = add(db, id, batch, 'boot-a');
		expect(first).toMatchObject({ stored: 3, duplicates: 0, rejected: [], lastSeq: 1003, readingCount: 3 });
		const again = add(db, id, batch, 'boot-a');
		expect(again).toMatchObject({ stored: 0, duplicates: 3, rejected: [], readingCount: 3 });
		// An overlapping batch stores only what is new.
		const overlap = add(db, id, [...batch.slice(1), reading('ambient', 1004, 22)]);
		expect(overlap).toMatchObject({ stored: 1, duplicates: 2, readingCount: 4 });
		expect(getRunDetail(db, id).readingCount).toBe(4);
	});

	it('keeps the valid rest of a mixed batch and names the rejected readings', () => {
		const { id } = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0);
		const res = add(db, id, [
			reading('heatsink-left', 2001, 35),
			reading('heatsink-left', 2002, 401), // above 400 °C
			reading('heatsink-right', 2003, -50.5), // below −50 °C
			{ probe: 'transformer', seq: 2004, t: T0, celsius: 'hot' }, // not a number
			reading('output-stage', 2005, 40), // not one of the run's probes
			{ probe: 'ambient', seq: 2006, t: T0, celsius: null },
			reading('heatsink-right', 2007, 400), // the boundaries themselves are fine
			reading('ambient', 2008, -50),
			42
		]);
		expect(res.stored).toBe(3);
		expect(res.rejected.map((r) => [r.index, r.probe, r.seq])).toEqual([
			[1, 'heatsink-left', 2002],
			[2, 'heatsink-right', 2003],
			[3, 'transformer', 2004],
			[4, 'output-stage', 2005],
			[5, 'ambient', 2006],
			[8, null, null]
		]);
		expect(res.rejected[0].reason).toMatch(/out of range/);
		expect(res.rejected[2].reason).toMatch(/not a number/);
		expect(res.rejected[3].reason).toMatch(/unknown probe/);
		const after = readingsAfter(db, id, 0);
		expect(after.readings.map((r) => [r.probe, r.seq, r.celsius])).toEqual([
			['heatsink-left', 2001, 35],
			['heatsink-right', 2007, 400],
			['ambient', 2008, -50]
		]);
		expect(readingsAfter(db, id, 2001).readings.map((r) => r.seq)).toEqual([2007, 2008]);
		expect(readingsAfter(db, id, 0, 2)).toMatchObject({ more: true, lastSeq: 2007 });
		// The newest readings, in seq order: what a page resuming a long run loads.
		expect(readingsTail(db, id, 2).readings.map((r) => r.seq)).toEqual([2007, 2008]);
		expect(readingsTail(db, id, 10).readings).toHaveLength(3);
		// While the run goes on, its detail carries the chart's bucket rows to resume from.
		const rows = getRunDetail(db, id, T0 + 60_000).seriesRows ?? [];
		expect(rows.reduce((n, r) => n + r.n, 0)).toBe(3);
	});

	it('a run that has ended refuses more readings and THD+N samples', () => {
		const { id } = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0);
		abortRun(db, id, { reason: 'operator stopped' }, T0 + 5000);
		expect(() => add(db, id, [reading('ambient', 5, 20)])).toThrow(/has ended/);
		expect(() => addEvents(db, id, [{ kind: 'thdn', at: T0, detail: { thdnPercent: 0.1 } }])).toThrow(
			/has ended/
		);
		expect(addEvents(db, id, [{ kind: 'note', at: T0 + 6000, detail: { text: 'let it cool' } }]).stored).toBe(
			1
		);
	});

	it('logs DC offset events and keeps the closing THD+N in the summary as samples arrive', async () => {
		const { eventsBodySchema } = await import('$lib/schemas/soak');
		const { id } = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0);
		const body = eventsBodySchema.parse({
			events: [
				{ kind: 'dc-offset', at: T0 + 1000, key: 'dc:left:1', detail: { channel: 'left', dcVolts: 0.012 } },
				{ kind: 'thdn', at: T0 + 3000, key: 't3', detail: { thdnPercent: 0.05, channel: 'left' } },
				{ kind: 'thdn', at: T0 + 2000, key: 't2', detail: { thdnPercent: 0.04, channel: 'left' } }
			]
		});
		expect(addEvents(db, id, body.events)).toEqual({ stored: 3, duplicates: 0 });
		const d = getRunDetail(db, id, T0 + 5000);
		expect(d.events.map((e) => e.kind)).toEqual(['start', 'dc-offset', 'thdn', 'thdn']);
		expect(d.summary.thdnEndPercent).toBe(0.05); // the latest by time, not the last posted
		expect(d.summary.breaches).toEqual([]); // 0.05 % is far below the default ceiling
		expect(() =>
			eventsBodySchema.parse({
				events: [{ kind: 'dc-offset', at: T0, detail: { channel: 'left', dcVolts: 1e6 } }]
			})
		).toThrow();
	});

	it('stores a keyed event once', () => {
		const { id } = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0);
		const gap = {
			kind: 'gap' as const,
			at: T0 + 10_000,
			key: 'gap-boot-b',
			detail: { reason: 'bridge-restart' as const, fromBootId: 'boot-a', toBootId: 'boot-b' }
		};
		expect(addEvents(db, id, [gap])).toEqual({ stored: 1, duplicates: 0 });
		expect(addEvents(db, id, [gap])).toEqual({ stored: 0, duplicates: 1 });
		expect(getRunDetail(db, id).events.map((e) => e.kind)).toEqual(['start', 'gap']);
	});
});

describe('ending a run', () => {
	// Time scale 60: one wall second is a soak minute, so the 60-minute preset ends after 60 s.
	function fastRun() {
		return createRun(
			db,
			ratedJob,
			'u1',
			{ preset: 'eighth-power-60', bridge: { timeScale: 60, lastSeq: 999, source: 'sim', temps: 'sim' } },
			T0
		).id;
	}
	function heatUp(id: number, peakLeftC: number) {
		// Per wall second s = 0..60 (soak minute s): left and right rise 0.5 °C/min to 55, left ends at peakLeftC.
		const readings = [];
		for (let s = 0; s <= 60; s++) {
			const c = Math.min(25 + s * 0.5, 55);
			readings.push(reading('heatsink-left', 1000 + 4 * s, s === 60 ? peakLeftC : c, s * 1000));
			readings.push(reading('heatsink-right', 1001 + 4 * s, c, s * 1000));
		}
		add(db, id, readings, 'boot-a');
	}

	it('refuses to finish before the duration', () => {
		const id = fastRun();
		expect(() => finishRun(db, id, T0 + 30_000)).toThrow(/min of soak time left/);
	});

	it('passes a run whose stored readings stay inside the limits', () => {
		const id = fastRun();
		heatUp(id, 55);
		const d = finishRun(db, id, T0 + 60_000);
		expect(d.verdict).toBe('passed');
		// Rises 0.5 °C per soak minute from 25 °C and reaches 55 °C at minute 60.
		expect(d.summary.probes['heatsink-left']).toMatchObject({ maxC: 55, finalC: 55, finalAtS: 3600 });
		expect(d.summary.steadyStateS).toBeNull(); // still rising 2.5 °C per 5 min at the end
		expect(() => finishRun(db, id, T0 + 61_000)).toThrow(/already ended/);
		expect(listRuns(db, ratedJob)[0]).toMatchObject({
			verdict: 'passed',
			maxC: { 'heatsink-left': 55, 'heatsink-right': 55 }
		});
	});

	it('fails a run when the stored readings show a breach the page did not report', () => {
		const id = fastRun();
		heatUp(id, 80); // left jumps to 80 °C in the last minute: above 75 °C, and 25 °C/min.
		const d = finishRun(db, id, T0 + 60_000);
		expect(d.verdict).toBe('failed');
		expect(d.summary.breaches.map((b) => b.kind).sort()).toEqual(['left-right', 'max-heatsink', 'rise-rate']);
	});

	it('fails a run whose record stops short of the duration', () => {
		const id = fastRun();
		// Readings only for soak minutes 0..40 (wall seconds 0..40): 20 minutes are missing.
		const readings = [];
		for (let s = 0; s <= 40; s++) readings.push(reading('heatsink-left', 1000 + s, 30, s * 1000));
		add(db, id, readings);
		const d = finishRun(db, id, T0 + 60_000);
		expect(d.summary.coveredS).toBe(2400); // 40 wall s × 60
		expect(d.summary.incomplete).toBe(true); // 2400 < 3600 − max(60, 3 × 60)
		expect(d.summary.breaches).toEqual([]);
		expect(d.verdict).toBe('failed');
	});

	it('does not judge readings logged after the planned end', () => {
		const id = fastRun();
		heatUp(id, 55);
		// The page came back late: the unit ran on and reached 90 °C at wall second 70 (soak minute 70).
		add(db, id, [reading('heatsink-left', 2000, 90, 70_000), reading('heatsink-right', 2001, 90, 70_000)]);
		const d = finishRun(db, id, T0 + 75_000);
		expect(d.verdict).toBe('passed');
		expect(d.summary.probes['heatsink-left'].maxC).toBe(55);
		expect(d.readingCount).toBe(124); // 61 × 2 judged + 2 kept but not judged
	});

	it('aborts with the reason, the moment and the breach', () => {
		const id = fastRun();
		heatUp(id, 55);
		const breach = {
			kind: 'max-heatsink' as const,
			probe: 'heatsink-left',
			t: T0 + 42_000,
			value: 76,
			limit: 75,
			message: 'too hot'
		};
		const d = abortRun(db, id, { reason: 'Limit breached: too hot', at: T0 + 42_000, breach }, T0 + 43_000);
		// A limit breach fails the run, with the breach as the reason: aborted is a technician's stop.
		expect(d.verdict).toBe('failed');
		expect(d.run.endedAt).toBe(T0 + 42_000);
		expect(d.run.abortReason).toBe('Limit breached: too hot');
		expect(d.events.map((e) => e.kind)).toEqual(['start', 'breach', 'abort']);
		const row = db.select().from(table.soakRuns).where(eq(table.soakRuns.id, id)).get();
		expect(row?.summary).not.toBeNull();
	});
});

describe('an accelerated clock', () => {
	const sim = { source: 'sim', temps: 'sim' } as const;

	it('is accepted only from the bridge simulator, and only up to ×120', () => {
		const bad = [
			{ timeScale: 60 }, // no source named
			{ timeScale: 60, source: 'wav', temps: 'sim' },
			{ timeScale: 60, source: 'cmd', temps: 'serial' },
			{ timeScale: 60, source: 'sim', temps: 'serial' }, // real probes heat in real time
			{ timeScale: 0.5, source: 'cmd' }
		] as const;
		for (const bridge of bad) {
			expect(
				() => createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60', bridge }, T0),
				JSON.stringify(bridge)
			).toThrow(/only accepted from the bridge simulator/);
		}
		expect(() =>
			createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60', bridge: { ...sim, timeScale: 3600 } }, T0)
		).toThrow(/120/);
		expect(listRuns(db, ratedJob, T0)).toEqual([]);
		// Real hardware at time scale 1 needs no source.
		const real = createRun(
			db,
			unratedJob,
			'u1',
			{
				preset: 'custom',
				custom: { watts: 5, loadOhms: 8, frequencyHz: 1000, durationS: 600, channels: ['left'] },
				bridge: { timeScale: 1, source: 'cmd', temps: 'serial' }
			},
			T0
		).id;
		expect(getRunDetail(db, real, T0).run.timeScale).toBe(1);
	});

	it('is stored with the source it came from and labelled wherever the run shows', () => {
		const { id } = createRun(
			db,
			ratedJob,
			'u1',
			{ preset: 'eighth-power-60', bridge: { ...sim, timeScale: 120, bootId: 'b1' } },
			T0
		);
		const d = getRunDetail(db, id, T0);
		expect(d.run.timeScale).toBe(120);
		expect(d.events).toEqual([
			expect.objectContaining({
				kind: 'start',
				at: T0,
				detail: { source: 'sim', temps: 'sim', bootId: 'b1', timeScale: 120 }
			})
		]);
		expect(acceleratedLabel(listRuns(db, ratedJob, T0)[0].run.timeScale)).toBe(
			'accelerated ×120 (simulator)'
		);
		expect(acceleratedLabel(1)).toBeNull();
	});
});

describe('an abandoned run', () => {
	// Time scale 60: the 60-minute preset's planned end is one wall minute after T0.
	const plannedEnd = T0 + 60_000;
	function abandoned(minutesOfReadings: number) {
		const { id } = createRun(
			db,
			ratedJob,
			'u1',
			{ preset: 'eighth-power-60', bridge: { timeScale: 60, lastSeq: 999, source: 'sim', temps: 'sim' } },
			T0
		);
		const readings = [];
		for (let s = 0; s <= minutesOfReadings; s++) {
			readings.push(reading('heatsink-left', 1000 + 2 * s, 30 + s / 10, s * 1000));
			readings.push(reading('heatsink-right', 1001 + 2 * s, 30 + s / 10, s * 1000));
		}
		add(db, id, readings, 'boot-a');
		return id;
	}

	it('stays running through the grace period, then the server finishes it from what is stored', () => {
		const id = abandoned(60);
		expect(getRunDetail(db, id, plannedEnd + OVERDUE_GRACE_MS).verdict).toBeNull();
		expect(() =>
			createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, plannedEnd + OVERDUE_GRACE_MS)
		).toThrow(/still running/);
		const d = getRunDetail(db, id, plannedEnd + OVERDUE_GRACE_MS + 1);
		expect(d.verdict).toBe('passed');
		expect(d.run.endedAt).toBe(plannedEnd);
		expect(d.summary.incomplete).toBe(false);
		expect(d.summary.probes['heatsink-left']).toMatchObject({ maxC: 36, finalAtS: 3600 });
		const closed = d.events.filter((e) => e.kind === 'server-closed');
		expect(closed).toHaveLength(1);
		expect(closed[0].at).toBe(plannedEnd + OVERDUE_GRACE_MS + 1);
		expect(String((closed[0].detail as { text: string }).text)).toMatch(
			/Closed by the server 10 min after the planned end/
		);
		// Asking again changes nothing.
		expect(
			getRunDetail(db, id, plannedEnd + 2 * OVERDUE_GRACE_MS).events.filter((e) => e.kind === 'server-closed')
		).toHaveLength(1);
	});

	it('fails when the stored record stops short, and no longer blocks a new run', () => {
		const id = abandoned(20); // the page went away after 20 soak minutes
		const late = plannedEnd + OVERDUE_GRACE_MS + 60_000;
		const next = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, late);
		expect(next.id).not.toBe(id);
		const d = getRunDetail(db, id, late);
		expect(d.verdict).toBe('failed');
		expect(d.summary.incomplete).toBe(true);
		expect(d.events.map((e) => e.kind)).toEqual(['start', 'server-closed']);
	});

	it('is closed when the job list or the soak page asks, judged on the real-time clock too', () => {
		const { id } = createRun(db, ratedJob, 'u1', { preset: 'third-power-60' }, T0); // time scale 1: one wall hour
		expect(runningRunId(db, ratedJob, T0 + 3_600_000 + OVERDUE_GRACE_MS)).toBe(id);
		expect(listRuns(db, ratedJob, T0 + 3_600_000 + OVERDUE_GRACE_MS)[0].verdict).toBeNull();
		expect(listRuns(db, ratedJob, T0 + 3_600_000 + OVERDUE_GRACE_MS + 1)[0]).toMatchObject({
			verdict: 'failed'
		});
		expect(runningRunId(db, ratedJob, T0 + 3_600_000 + OVERDUE_GRACE_MS + 1)).toBeNull();
	});
});

describe('a server restart', () => {
	it('loses nothing that was acknowledged', () => {
		const dir = mkdtempSync(join(tmpdir(), 'soak-restart-'));
		try {
			const file = join(dir, 'bench.db');
			const live = openDb(file);
			live
				.insert(table.users)
				.values({ id: 'u1', email: 't@example.com', name: 'T', role: 'technician', passwordHash: 'x' })
				.run();
			const c = live.insert(table.customers).values({ name: 'C' }).returning().get();
			const job = live
				.insert(table.jobs)
				.values({
					customerId: c.id,
					category: 'receiver',
					make: 'Vellum',
					model: 'R-2',
					complaint: 'hot',
					ratedPowerW: 50,
					ratedLoadOhms: 8
				})
				.returning()
				.get().id;
			const { id } = createRun(live, job, 'u1', { preset: 'eighth-power-60' }, T0);
			let acknowledged = 0;
			for (let b = 0; b < 5; b++) {
				const batch = Array.from({ length: 100 }, (_, i) =>
					reading('heatsink-left', 10_000 + b * 100 + i, 30 + i / 100)
				);
				acknowledged += add(live, id, batch, 'boot-a').stored;
			}
			// The process dies here: no close, no checkpoint. Copy the files exactly as they are on disk.
			const copy = join(dir, 'after-crash.db');
			copyFileSync(file, copy);
			if (existsSync(`${file}-wal`)) copyFileSync(`${file}-wal`, `${copy}-wal`);
			const reopened = openDb(copy);
			expect(acknowledged).toBe(500);
			expect(getRunDetail(reopened, id).readingCount).toBe(500);
			reopened.$client.close();
			live.$client.close();
		} finally {
			rmSync(dir, { recursive: true, force: true });
		}
	});
});

describe('the summary kept as readings arrive', () => {
	/**
	 * An hour at time scale 1, three probes every 2 s: heating towards 48 °C then flat (steady
	 * state), a bridge restart, a 40 s silence, a rise-rate spike on the transformer and a
	 * left/right split late in the run.
	 */
	function record(): { probe: string; seq: number; t: number; celsius: number; bootId: string }[] {
		const out = [];
		let seq = 5000;
		for (let s = 0; s <= 3600; s += 2) {
			if (s > 1500 && s < 1540) continue; // silence
			const boot = s < 1000 ? 'boot-a' : 'boot-b';
			const base = 25 + 23 * (1 - Math.exp(-s / 400));
			const spike = s >= 2200 && s < 2230 ? (s - 2200) * 0.6 : 0; // up to 17 °C in 30 s
			const split = s > 3000 ? (s - 3000) / 40 : 0; // left pulls away by up to 15 °C
			out.push({ probe: 'heatsink-left', seq: ++seq, t: T0 + s * 1000, celsius: base + split, bootId: boot });
			out.push({ probe: 'heatsink-right', seq: ++seq, t: T0 + s * 1000, celsius: base, bootId: boot });
			out.push({
				probe: 'transformer',
				seq: ++seq,
				t: T0 + s * 1000,
				celsius: base - 5 + spike,
				bootId: boot
			});
		}
		return out;
	}

	it('equals the summary computed from the whole stored record, uploaded in uneven batches', async () => {
		const { rebuildSummary } = await import('./soak-summary');
		const { id } = createRun(
			db,
			ratedJob,
			'u1',
			{
				preset: 'custom',
				custom: { watts: 10, frequencyHz: 1000, durationS: 3600, channels: ['left', 'right'] }
			},
			T0
		);
		const all = record();
		for (let i = 0, n = 1; i < all.length; i += n, n = ((n * 7) % 61) + 1) add(db, id, all.slice(i, i + n));
		const incremental = getRunDetail(db, id, T0 + 3_600_000).summary;
		const row = db.select().from(table.soakRuns).where(eq(table.soakRuns.id, id)).get()!;
		const full = rebuildSummary(db, row, getRunDetail(db, id, T0 + 3_600_000).limits).summary;
		expect(incremental.probes).toEqual(full.probes);
		expect(incremental.gaps).toEqual(full.gaps);
		expect(incremental.breaches).toEqual(full.breaches);
		expect(incremental.steadyStateS).toBe(full.steadyStateS);
		expect(incremental.coveredS).toBe(full.coveredS);
		// The record shows what it was built to show (so the comparison above compares something).
		expect(full.gaps.map((g) => g.reason)).toEqual(['bridge-restart', 'silence']);
		expect(full.breaches.map((b) => b.kind).sort()).toEqual(['left-right', 'rise-rate']);
		expect(full.steadyStateS).not.toBeNull();
	});

	it('charts a run in at most 720 buckets per probe whatever the readings span', () => {
		const { id } = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0);
		// The earliest and the latest moments the window allows, and a day of readings between.
		const readings = [];
		for (let i = 0; i <= 2000; i++)
			readings.push({
				probe: 'heatsink-left',
				seq: 10 + i,
				t: T0 - 120_000 + i * 43_200,
				celsius: 30 + (i % 7)
			});
		const res = add(db, id, readings, undefined, T0 + 86_400_000);
		expect(res.rejected).toEqual([]);
		const d = getRunDetail(db, id, T0 + 3_000_000);
		const chart = d.series.probes['heatsink-left'];
		expect(d.series.minutes.length).toBeLessThanOrEqual(720);
		expect(chart.meanC.length).toBe(d.series.minutes.length);
		// Every reading is counted once: the bucket means weigh back to the mean of the readings.
		const rows = db.select().from(table.soakSeries).where(eq(table.soakSeries.runId, id)).all();
		expect(rows.reduce((n, r) => n + r.n, 0)).toBe(2001);
		expect(Math.max(...rows.map((r) => r.maxC))).toBe(36);
	});

	it("ends a technician's stop as aborted, but a stop over a stored breach as failed with the breach", () => {
		const a = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0).id;
		add(db, a, [reading('heatsink-left', 1001, 40, 1000), reading('heatsink-right', 1002, 40, 1000)]);
		const stopped = abortRun(db, a, { reason: 'Customer collected early' }, T0 + 5000);
		expect(stopped).toMatchObject({ verdict: 'aborted', run: { abortReason: 'Customer collected early' } });
		// The stored figures are the summary's: readings count, max under the card.
		expect(stopped.summary.probes['heatsink-left']).toMatchObject({ maxC: 40, readings: 1 });

		const b = createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0 + 10_000).id;
		add(db, b, [reading('heatsink-left', 1011, 90, 11_000)]); // above the 70 °C default
		const failed = abortRun(db, b, { reason: 'Stopped' }, T0 + 12_000);
		expect(failed.verdict).toBe('failed');
		// Probe names as a person reads them, never the id.
		expect(failed.run.abortReason).toMatch(/^Limit breached: Heatsink L reached 90\.0 °C/);
		expect(failed.run.abortReason).not.toMatch(/heatsink-left/);
	});
});

describe('the one-third-power caution', () => {
	it('asks for confirmation on a unit made before 1974, and the preset texts never claim compliance', async () => {
		const { FIXED_PRESETS } = await import('$lib/soak/presets');
		const c = db.insert(table.customers).values({ name: 'Old Unit Owner' }).returning().get();
		const old = db
			.insert(table.jobs)
			.values({
				customerId: c.id,
				category: 'receiver',
				make: 'Vellum',
				model: 'R-70',
				complaint: 'recap',
				year: 1971,
				ratedPowerW: 40,
				ratedLoadOhms: 8
			})
			.returning()
			.get().id;
		expect(() => createRun(db, old, 'u1', { preset: 'third-power-60' }, T0)).toThrow(
			/Confirm the one-third-power caution/
		);
		// ⅛ power needs no confirmation; ⅓ power does, and runs once given.
		expect(createRun(db, old, 'u1', { preset: 'third-power-60', confirmHeat: true }, T0).id).toBeGreaterThan(
			0
		);
		// A newer unit (the rated job has no year) starts without it.
		expect(createRun(db, ratedJob, 'u1', { preset: 'third-power-60' }, T0).id).toBeGreaterThan(0);
		for (const p of FIXED_PRESETS) {
			expect(p.meaning).toMatch(/not a power-rating test and does not show compliance/);
			expect(p.basis).toMatch(/preconditioning/);
		}
		expect(FIXED_PRESETS.find((p) => p.id === 'third-power-60')?.caution).toMatch(
			/worst-case heat of a class-AB/
		);
	});

	it('a signed-off job refuses a new soak (409), and takes one again once reopened', () => {
		db.update(table.jobs).set({ status: 'approved' }).where(eq(table.jobs.id, ratedJob)).run();
		let err: unknown;
		try {
			createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0);
		} catch (e) {
			err = e;
		}
		expect(err).toBeInstanceOf(DomainError);
		expect((err as DomainError).code).toBe('conflict');
		expect(listRuns(db, ratedJob, T0)).toHaveLength(0);
		db.update(table.jobs).set({ status: 'diagnosing' }).where(eq(table.jobs.id, ratedJob)).run();
		expect(createRun(db, ratedJob, 'u1', { preset: 'eighth-power-60' }, T0).id).toBeGreaterThan(0);
	});
});
