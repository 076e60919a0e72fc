// Sources named beside the checks are described in tests/REFERENCES.md § 18 (bench procedures).
// The procedure service on an in-memory database: the server's own figures from the raw steps,
// the lamp refusal, immutability and the audit entry.
import { beforeEach, describe, expect, it } from 'vitest';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { listProcedureRuns, procedureSummary, recordProcedureRun } from './procedures';
import { riaaPlaybackDb } from '$lib/dsp/riaa';
import type { DomainError } from './errors';
import { createLimitProfile } from './limit-profiles';
import { evaluateLimits } from '$lib/limit-profiles';

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

	it('recomputes crosstalk from each step’s two levels and judges it against the limit', () => {
		const base = { kind: 'crosstalk', label: 'Line in', settleMs: 300, generatorVrms: 0.5 };
		const steps = [
			// 10 V driven, 1 mV leaked: 20·lg(1e-4) = −80 dB; 10 mV: −60 dB.
			{ frequencyHz: 1000, direction: 'left-to-right', drivenVrms: 10, leakVrms: 0.001 },
			{ frequencyHz: 10_000, direction: 'right-to-left', drivenVrms: 10, leakVrms: 0.01 }
		];
		const run = recordProcedureRun(db, jobId, 'u1', { ...base, limitDb: -50, steps });
		if (run.result.kind !== 'crosstalk') throw new Error('crosstalk expected');
		expect(run.result.stepsDb[0]).toBeCloseTo(-80, 9);
		expect(run.result.worstDb['right-to-left']).toBeCloseTo(-60, 9);
		expect(run.verdict).toBe('pass');
		expect(recordProcedureRun(db, jobId, 'u1', { ...base, limitDb: -70, steps }).verdict).toBe('fail');
		expect(() =>
			recordProcedureRun(db, jobId, 'u1', {
				...base,
				limitDb: null,
				steps: [{ ...steps[0], direction: 'up' }]
			})
		).toThrow(/Invalid procedure result/);
	});

	it('recomputes IMD from the tone and product levels with the standard sums, and refuses a short product list', () => {
		const run = recordProcedureRun(db, jobId, 'u1', {
			kind: 'imd',
			label: 'Line in, 1 V',
			settleMs: 300,
			generatorVrms: 1,
			limitPercent: 1,
			measurements: [
				// SMPTE: 2nd-order sidebands 0.0025 + 0.0025 re 0.25 → 2 %; 3rd 0.001 + 0.001 → 0.8 % (RP120).
				{
					method: 'smpte',
					channels: [{ tone1Vrms: 1, tone2Vrms: 0.25, productVrms: [0.0025, 0.0025, 0.001, 0.001] }]
				},
				// Twin-tone 0.3 + 0.3: 1 kHz 0.003 → 0.5 % of 0.6 (IEC 60268-3 difference frequency).
				{ method: 'twin-tone', channels: [{ tone1Vrms: 0.3, tone2Vrms: 0.3, productVrms: [0.003, 0, 0] }] }
			]
		});
		if (run.result.kind !== 'imd') throw new Error('imd expected');
		expect(run.result.measurements[0].channels[0]!.imdPercent).toBeCloseTo(Math.hypot(2, 0.8), 9);
		expect(run.result.measurements[1].channels[0]!.imdPercent).toBeCloseTo(0.5, 9);
		expect(run.result.worstPercent).toBeCloseTo(2.154, 3);
		expect(run.verdict).toBe('fail'); // 2.15 % > 1 %
		let issues: { path: string; message: string }[] = [];
		try {
			recordProcedureRun(db, jobId, 'u1', {
				kind: 'imd',
				label: 'short',
				settleMs: 300,
				generatorVrms: 1,
				limitPercent: null,
				measurements: [
					{ method: 'smpte', channels: [{ tone1Vrms: 1, tone2Vrms: 0.25, productVrms: [0, 0, 0] }] }
				]
			});
		} catch (e) {
			issues = (e as DomainError).issues ?? [];
		}
		expect(issues[0]?.message).toMatch(/smpte IMD lists 4 products/);
	});

	it('meter check: power from V²/R, error in dB, judged against ± dB; an unread step cannot pass', () => {
		const base = {
			kind: 'meter',
			label: 'Power meter, left',
			frequencyHz: 1000,
			loadOhms: 8,
			channel: 'left',
			settleMs: 300,
			limitDb: 1
		};
		// √80 V into 8 Ω = 10 W; the meter shows 11 W: 10·lg 1.1 = +0.414 dB, +10 %.
		const step = { targetW: 10, generatorVrms: 0.45, outputVrms: Math.sqrt(80), indicatedW: 11 };
		const run = recordProcedureRun(db, jobId, 'u1', { ...base, steps: [step] });
		if (run.result.kind !== 'meter') throw new Error('meter expected');
		expect(run.result.points[0].measuredW).toBeCloseTo(10, 9);
		expect(run.result.maxErrorDb).toBeCloseTo(0.4139, 4);
		expect(run.result.maxErrorPercent).toBeCloseTo(10, 9);
		expect(run.verdict).toBe('pass');
		expect(
			recordProcedureRun(db, jobId, 'u1', { ...base, steps: [step, { ...step, indicatedW: null }] }).verdict
		).toBe('fail');
	});

	it('stability: a record with the observation; the photo must be a photo on this job', () => {
		const base = {
			kind: 'stability',
			label: 'Square wave, 8 Ω ∥ 2 µF',
			squareWaveHz: 10_000,
			loadOhms: 8,
			capacitanceMicrofarads: 2,
			channels: 'both',
			note: 'two cycles of ringing at 1 MHz'
		};
		const run = recordProcedureRun(db, jobId, 'u1', { ...base, observed: 'ringing', photoFileId: null });
		expect(run.verdict).toBe('pass');
		expect(
			recordProcedureRun(db, jobId, 'u1', { ...base, observed: 'oscillation', photoFileId: null }).verdict
		).toBe('fail');
		const file = (type: 'png' | 'pdf') =>
			db
				.insert(table.jobFiles)
				.values({
					jobId,
					sha256: 'a'.repeat(64),
					receivedSha256: 'b'.repeat(64),
					name: `trace.${type}`,
					type,
					bytes: 10,
					uploadedBy: 'u1',
					uploadedAt: new Date()
				})
				.returning()
				.get().id;
		const photo = file('png');
		const pdf = file('pdf');
		const withPhoto = recordProcedureRun(db, jobId, 'u1', { ...base, observed: 'none', photoFileId: photo });
		if (withPhoto.result.kind !== 'stability') throw new Error('stability expected');
		expect(withPhoto.result.photoFileId).toBe(photo);
		expect(() =>
			recordProcedureRun(db, jobId, 'u1', { ...base, observed: 'none', photoFileId: pdf })
		).toThrow(/photo among this job/);
		expect(() =>
			recordProcedureRun(db, jobId, 'u1', { ...base, observed: 'none', photoFileId: 999 })
		).toThrow(/photo among this job/);
	});

	it('a limit profile’s procedure limits judge the run instead of the run’s own limit', () => {
		const profile = createLimitProfile(
			db,
			{
				name: 'Restored receiver, procedures',
				conditions: {},
				limits: [
					{ metric: 'flatnessDb', op: 'le', value: 0.5, unit: 'dB' },
					{ metric: 'crosstalkDb', op: 'le', value: -70, unit: 'dB' },
					{ metric: 'powerAtThresholdW', op: 'ge', value: 45, unit: 'W' }
				]
			},
			'u1'
		);
		// −1.0 dB at 20 Hz passes the run's ±1 dB but not the profile's ±0.5 dB.
		const run = recordProcedureRun(db, jobId, 'u1', {
			kind: 'response',
			label: 'Judged by the profile',
			bandHz: [20, 20_000],
			limitPlusMinusDb: 1,
			profileId: profile.id,
			...sweep([0.8913, 1, 1.0593])
		});
		expect(run.verdict).toBe('fail');
		expect(run.result.appliedLimit).toMatchObject({
			source: 'profile',
			value: 0.5,
			profile: { name: profile.name }
		});
		// −60 dB at 10 kHz is above the profile's −70 dB.
		const xt = recordProcedureRun(db, jobId, 'u1', {
			kind: 'crosstalk',
			label: 'By profile',
			settleMs: 300,
			generatorVrms: 0.5,
			limitDb: null,
			profileId: profile.id,
			steps: [{ frequencyHz: 10_000, direction: 'left-to-right', drivenVrms: 10, leakVrms: 0.01 }]
		});
		expect(xt.verdict).toBe('fail');
		// A profile without a limit for the kind leaves the run's own limit in charge.
		const meter = recordProcedureRun(db, jobId, 'u1', {
			kind: 'meter',
			label: 'Meter',
			frequencyHz: 1000,
			loadOhms: 8,
			channel: 'left',
			settleMs: 300,
			limitDb: 1,
			profileId: profile.id,
			steps: [{ targetW: 10, generatorVrms: 0.45, outputVrms: Math.sqrt(80), indicatedW: 10 }]
		});
		expect(meter.verdict).toBe('pass');
		expect(meter.result.appliedLimit?.source).toBe('run');
		// Power at the threshold: 18.29 V into 8 Ω = 41.8 W (P = V²/R) is below the profile's 45 W.
		const ramp = recordProcedureRun(db, jobId, 'u1', {
			kind: 'max-power',
			label: '1 kHz',
			frequencyHz: 1000,
			loadOhms: 8,
			thresholdPercent: 0.1,
			startLevelVrms: 0.5,
			stepDb: 0.5,
			maxLevelVrms: 2,
			maxSteps: 60,
			channels: 2,
			mainsVoltsRms: 230,
			throughLamp: false,
			profileId: profile.id,
			readings: [
				{ levelVrms: 0.5, outputVrms: [18, 18], thdnPercent: [0.02, 0.02] },
				{ levelVrms: 0.53, outputVrms: [19, 19], thdnPercent: [0.3, 0.3] }
			]
		});
		expect(ramp.verdict).toBe('fail');
		expect(() =>
			recordProcedureRun(db, jobId, 'u1', {
				kind: 'crosstalk',
				label: 'x',
				settleMs: 300,
				generatorVrms: 0.5,
				limitDb: null,
				profileId: 9999,
				steps: [{ frequencyHz: 1000, direction: 'left-to-right', drivenVrms: 1, leakVrms: 0.001 }]
			})
		).toThrow(/limit profile/);
	});

	it('procedure limits are bound one way and never judge a snapshot', () => {
		expect(() =>
			createLimitProfile(
				db,
				{
					name: 'Wrong way',
					conditions: {},
					limits: [{ metric: 'flatnessDb', op: 'ge', value: 1, unit: 'dB' }]
				},
				'u1'
			)
		).toThrow(/bound one way/);
		const checks = evaluateLimits(
			[
				{ metric: 'meterErrorDb', channel: 'each', op: 'le', value: 1, unit: 'dB' },
				{ metric: 'thdPercent', channel: 'each', op: 'le', value: 1, unit: '%' }
			],
			{ channels: [{ thdPercent: 0.1 }], stereo: {} }
		);
		expect(checks.map((c) => c.metric)).toEqual(['thdPercent']);
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
