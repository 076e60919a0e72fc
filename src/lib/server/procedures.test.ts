// Sources named beside the checks are described in tests/REFERENCES.md § 18 (bench procedures).
// The procedure service on an in-memory database: the server's own figures from the raw steps,
// the lamp refusal, immutability and the audit entry.
import { beforeEach, describe, expect, it } from 'vitest';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { listProcedureRuns, procedureSummary, recordProcedureRun } from './procedures';
import { riaaPlaybackDb } from '$lib/dsp/riaa';
import type { DomainError } from './errors';

let db: Db;
let jobId: number;
beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values({ id: 'u1', email: 't@example.com', name: 'Tess Bench', role: 'technician', passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'C' }).returning().get();
	jobId = db
		.insert(table.jobs)
		.values({
			customerId: c.id,
			category: 'receiver',
			make: 'Corvane',
			model: 'CR-1',
			complaint: 'dull treble',
			ratedPowerW: 40,
			ratedLoadOhms: 8
		})
		.returning()
		.get().id;
});

const sweep = (levels: [number, number, number]) => ({
	perOctave: 3,
	settleMs: 300,
	generatorVrms: 0.5,
	steps: [
		{ frequencyHz: 20, levelVrms: [levels[0], levels[0]] },
		{ frequencyHz: 1000, levelVrms: [levels[1], levels[1]] },
		{ frequencyHz: 20_000, levelVrms: [levels[2], levels[2]] }
	]
});

describe('recording a procedure', () => {
	it('computes the response and its flatness from the raw levels, whatever the bench claimed', () => {
		// 20 Hz at 0.891 of the 1 kHz level is −1.0 dB (20·lg 0.8913); 20 kHz at 1.0593 is +0.5 dB.
		const run = recordProcedureRun(db, jobId, 'u1', {
			kind: 'response',
			label: 'Tone controls flat',
			bandHz: [20, 20_000],
			limitPlusMinusDb: 1,
			...sweep([0.8913, 1, 1.0593])
		});
		expect(run.result.kind).toBe('response');
		if (run.result.kind !== 'response') return;
		expect(run.result.relativeDb[0][0]).toBeCloseTo(-1.0, 2);
		expect(run.result.flatness[0]!.plusMinusDb).toBeCloseTo(0.75, 2); // (0.5 − (−1.0)) / 2
		expect(run.verdict).toBe('pass');
		const strict = recordProcedureRun(db, jobId, 'u1', {
			kind: 'response',
			label: 'Strict',
			bandHz: [20, 20_000],
			limitPlusMinusDb: 0.5,
			...sweep([0.8913, 1, 1.0593])
		});
		expect(strict.verdict).toBe('fail'); // −1.0 dB at 20 Hz is outside ±0.5 dB
	});

	it('judges a phono stage against the RIAA playback curve (IEC 60098)', () => {
		const lv = (f: number, offsetDb = 0) => 10 ** ((riaaPlaybackDb(f) + offsetDb) / 20);
		const run = recordProcedureRun(db, jobId, 'u1', {
			kind: 'phono',
			label: 'Phono, flat feed',
			feed: 'flat',
			iecRolloff: false,
			loadingOhms: 47_000,
			loadingPicofarads: 150,
			limitDb: 0.5,
			perOctave: 3,
			settleMs: 300,
			generatorVrms: 0.005,
			steps: [
				{ frequencyHz: 20, levelVrms: [lv(20, 0.3), lv(20, -0.1)] },
				{ frequencyHz: 1000, levelVrms: [1, 1] },
				{ frequencyHz: 20_000, levelVrms: [lv(20_000), lv(20_000)] }
			]
		});
		if (run.result.kind !== 'phono') throw new Error('phono expected');
		expect(run.result.maxDeviationDb[0]).toBeCloseTo(0.3, 6);
		expect(run.result.channelMatchDb).toBeCloseTo(0.4, 6);
		expect(run.verdict).toBe('pass');
	});

	it('refuses a maximum-power figure taken through a series lamp, and replays the ramp itself', () => {
		const ramp = {
			kind: 'max-power',
			label: '1 kHz, 8 Ω, 0.1 %',
			frequencyHz: 1000,
			loadOhms: 8,
			thresholdPercent: 0.1,
			startLevelVrms: 0.5,
			stepDb: 0.5,
			maxLevelVrms: 2,
			maxSteps: 60,
			channels: 2,
			mainsVoltsRms: 230,
			throughLamp: true,
			readings: [
				{ levelVrms: 0.5, outputVrms: [18, 18], thdnPercent: [0.02, 0.02] },
				{ levelVrms: 0.53, outputVrms: [19, 19], thdnPercent: [0.3, 0.3] }
			]
		};
		expect(() => recordProcedureRun(db, jobId, 'u1', ramp)).toThrow(/current-limiting lamp/);
		const run = recordProcedureRun(db, jobId, 'u1', { ...ramp, throughLamp: false });
		if (run.result.kind !== 'max-power') throw new Error('max-power expected');
		// 18 + (0.1 − 0.02)/(0.3 − 0.02) · 1 = 18.2857 V → 18.2857²/8 = 41.80 W (P = V²/R).
		expect(run.result.crossings[0]!.powerW).toBeCloseTo(18.2857 ** 2 / 8, 2);
		expect(run.result.reason).toBe('threshold');
		expect(run.verdict).toBe('pass');
	});

	it('names what is wrong with an upload, keeps the record immutable and audits it', () => {
		let issues: { path: string; message: string }[] = [];
		try {
			recordProcedureRun(db, jobId, 'u1', {
				kind: 'response',
				label: '',
				bandHz: [1000, 20],
				limitPlusMinusDb: 1,
				...sweep([1, 1, 1]),
				perOctave: 5
			});
		} catch (e) {
			issues = (e as DomainError).issues ?? [];
		}
		// Every problem at once, each with what is allowed.
		expect(issues.map((i) => i.path).sort()).toEqual(['bandHz', 'label', 'perOctave']);
		expect(issues.find((i) => i.path === 'perOctave')?.message).toMatch(/3, 6, 12/);
		expect(listProcedureRuns(db, jobId)).toHaveLength(0);
		const run = recordProcedureRun(db, jobId, 'u1', {
			kind: 'response',
			label: 'ok',
			bandHz: [20, 20_000],
			limitPlusMinusDb: null,
			...sweep([1, 1, 1])
		});
		expect(run.verdict).toBe('none');
		expect(() => db.$client.prepare(`update procedure_runs set verdict = 'pass'`).run()).toThrow(/immutable/);
		expect(() => db.$client.prepare(`delete from procedure_runs`).run()).toThrow(/immutable/);
		const trail = db.select().from(table.auditLog).all();
		expect(trail.map((a) => a.action)).toContain('procedure.recorded');
		expect(listProcedureRuns(db, jobId)).toHaveLength(1);
		expect(procedureSummary(db, jobId).map((r) => r.kind)).toEqual(['response']);
	});
});
