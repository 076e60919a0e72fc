import { describe, expect, it } from 'vitest';
import {
	conditionMismatches,
	conditionsSchema,
	describeConditions,
	describeLimit,
	describeMismatch,
	evaluateLimits,
	limitSchema,
	measurementsFromResults,
	profileInputSchema,
	stereoMeasurements,
	verdictOf,
	type Limit
} from './limit-profiles';

const lim = (l: Partial<Limit> & Pick<Limit, 'metric' | 'op' | 'value' | 'unit'>): Limit =>
	limitSchema.parse({ channel: 'each', ...l });

describe('evaluateLimits', () => {
	const measured = {
		channels: [
			{ thdnPercent: 0.02, levelVrms: 6.4, noiseVrms: 120e-6, powerW: 6.4 ** 2 / 8 },
			{ thdnPercent: 0.3, levelVrms: 6.1, noiseVrms: 800e-6, powerW: 6.1 ** 2 / 8 }
		],
		stereo: stereoMeasurements({ levelDbv: 16.12 }, { levelDbv: 15.7 })
	};

	it('expands "each" into one check per channel and fails only the bad one', () => {
		const checks = evaluateLimits(
			[lim({ metric: 'thdnPercent', op: 'le', value: 0.1, unit: '%' })],
			measured
		);
		expect(checks.map((c) => [c.channel, c.pass])).toEqual([
			['left', true],
			['right', false]
		]);
		expect(checks[1].measured).toBeCloseTo(0.3, 12);
		expect(verdictOf(checks)).toBe('fail');
	});

	it('converts the entered unit: 500 µV passes 120 µV, fails 800 µV, and reports in µV', () => {
		const checks = evaluateLimits([lim({ metric: 'noiseVrms', op: 'le', value: 500, unit: 'µV' })], measured);
		expect(checks[0].measured).toBeCloseTo(120, 9);
		expect(checks[1].measured).toBeCloseTo(800, 9);
		expect(checks.map((c) => c.pass)).toEqual([true, false]);
	});

	it('P = V²/R: 6.4 V into 8 Ω is 5.12 W, passing ≥ 5 W; 6.1 V is 4.65 W, failing', () => {
		// P = V_rms²/R (REFERENCES.md §5: 20 V into 8 Ω = 50 W)
		const checks = evaluateLimits([lim({ metric: 'powerW', op: 'ge', value: 5, unit: 'W' })], measured);
		expect(checks[0].measured).toBeCloseTo(5.12, 9);
		expect(checks[1].measured).toBeCloseTo(4.65125, 9);
		expect(checks.map((c) => c.pass)).toEqual([true, false]);
	});

	it('picks one channel when asked and treats ≥ and ≤ at the boundary as passing', () => {
		const checks = evaluateLimits(
			[
				lim({ metric: 'levelVrms', channel: 'right', op: 'ge', value: 6100, unit: 'mV' }),
				lim({ metric: 'levelVrms', channel: 'left', op: 'le', value: 6.4, unit: 'V' })
			],
			measured
		);
		expect(checks.map((c) => [c.channel, c.pass])).toEqual([
			['right', true],
			['left', true]
		]);
		expect(verdictOf(checks)).toBe('pass');
	});

	it('balance is |L − R| in dB', () => {
		const checks = evaluateLimits([lim({ metric: 'balanceDb', op: 'le', value: 0.5, unit: 'dB' })], measured);
		expect(checks).toHaveLength(1);
		expect(checks[0].channel).toBeNull();
		expect(checks[0].measured).toBeCloseTo(0.42, 9);
		expect(checks[0].pass).toBe(true);
		const tighter = evaluateLimits(
			[lim({ metric: 'balanceDb', op: 'le', value: 0.4, unit: 'dB' })],
			measured
		);
		expect(tighter[0].pass).toBe(false);
	});

	it('a figure that was not measured fails, with a reason', () => {
		const mono = {
			channels: [{ thdnPercent: 0.01 }],
			stereo: stereoMeasurements({ levelDbv: 0 }, undefined)
		};
		const checks = evaluateLimits(
			[
				lim({ metric: 'thdnPercent', channel: 'right', op: 'le', value: 1, unit: '%' }),
				lim({ metric: 'balanceDb', op: 'le', value: 1, unit: 'dB' }),
				lim({ metric: 'snrDb', op: 'ge', value: 60, unit: 'dB' }),
				lim({ metric: 'thdnPercent', op: 'le', value: 1, unit: '%' })
			],
			mono
		);
		expect(checks.map((c) => [c.channel, c.pass, c.note ?? null])).toEqual([
			['right', false, 'right channel not captured'],
			[null, false, 'needs both channels'],
			['left', false, 'not measured'],
			['left', true, null]
		]);
	});

	it('NaN is not a pass', () => {
		const checks = evaluateLimits([lim({ metric: 'snrDb', op: 'ge', value: 60, unit: 'dB' })], {
			channels: [{ snrDb: Number.NaN }],
			stereo: {}
		});
		expect(checks[0].pass).toBe(false);
		expect(checks[0].measured).toBeNull();
	});

	it('a THD limit in ppm compares against percent: 100 ppm = 0.01 %', () => {
		const checks = evaluateLimits([lim({ metric: 'thdPercent', op: 'le', value: 100, unit: 'ppm' })], {
			channels: [{ thdPercent: 0.009 }, { thdPercent: 0.011 }],
			stereo: {}
		});
		expect(checks[0].measured).toBeCloseTo(90, 9);
		expect(checks.map((c) => c.pass)).toEqual([true, false]);
	});

	it('no checks means no verdict', () => {
		expect(verdictOf([])).toBe('none');
	});
});

describe('schemas', () => {
	it('refuses a unit that does not fit the metric', () => {
		const r = limitSchema.safeParse({ metric: 'thdPercent', op: 'le', value: 1, unit: 'V' });
		expect(r.success).toBe(false);
		if (!r.success) expect(r.error.issues[0].path).toEqual(['unit']);
	});
	it('refuses an inverted band and fills defaults', () => {
		expect(conditionsSchema.safeParse({ bandLowHz: 20_000, bandHighHz: 20 }).success).toBe(false);
		expect(conditionsSchema.parse({})).toEqual({ bandLowHz: 20, bandHighHz: 20_000, weighting: 'none' });
	});
	it('needs a name and at least one limit', () => {
		const r = profileInputSchema.safeParse({ name: ' ', conditions: {}, limits: [] });
		expect(r.success).toBe(false);
		if (!r.success) expect(r.error.issues.map((i) => i.path[0]).sort()).toEqual(['limits', 'name']);
	});
	it('describes a limit in words', () => {
		expect(describeLimit(lim({ metric: 'thdnPercent', op: 'le', value: 0.05, unit: '%' }))).toBe(
			'THD+N (each channel) ≤ 0.05 %'
		);
	});
	it('names what differs from the profile in one sentence, verb agreeing', () => {
		const c = conditionsSchema.parse({ generatorLevelVrms: 0.32, loadOhms: 8, weighting: 'none' });
		const live = {
			bandHz: [20, 20_000] as const,
			weighting: 'none' as const,
			loadOhms: 8,
			referenceVrms: 0.32
		};
		expect(conditionMismatches(live, c, 24_000)).toEqual([]);
		expect(describeMismatch([])).toBeNull();
		expect(describeMismatch(conditionMismatches({ ...live, loadOhms: 4 }, c, 24_000))).toBe(
			'Live load (4 Ω, profile 8 Ω) differs from the profile; a capture is judged in the profile’s band and weighting, and its power and gain limits fail under another load or level.'
		);
		expect(
			describeMismatch(
				conditionMismatches({ ...live, bandHz: [400, 2000], weighting: 'a', referenceVrms: null }, c, 24_000)
			)
		).toBe(
			'Live band (400 Hz–2 kHz, profile 20 Hz–20 kHz), weighting (A-weighted, profile unweighted) and gain reference (not set, profile 0.32 V rms) differ from the profile; a capture is judged in the profile’s band and weighting, and its power and gain limits fail under another load or level.'
		);
		// A band top above Nyquist is the same band once both are clipped.
		expect(
			conditionMismatches({ ...live, bandHz: [20, 30_000] }, { ...c, bandHighHz: 40_000 }, 24_000)
		).toEqual([]);
		expect(describeConditions(c)).toBe('0.32 V rms, 8 Ω load, 20 Hz–20 kHz, unweighted');
	});
});

describe('limits on figures that need no tone', () => {
	const base = {
		frequencyHz: null,
		levelVrms: 2.5e-4,
		levelDbv: -72,
		thdPercent: null,
		thdDb: null,
		thdnPercent: null,
		thdnDb: null,
		noiseVrms: 2.5e-4,
		snrDb: null,
		noiseWeightedVrms: 5e-5,
		snrWeightedDb: null,
		snDb: 81,
		snWeightedDb: 95,
		dcVolts: -0.012
	};
	it('a THD limit fails as "not measured" with no tone; noise, S/N and DC offset are judged', () => {
		const m = measurementsFromResults([base], {}, [], 'a', { dcCoupled: true });
		const checks = evaluateLimits(
			[
				{ metric: 'thdnPercent', channel: 'left', op: 'le', value: 0.1, unit: '%' },
				{ metric: 'noiseVrms', channel: 'left', op: 'le', value: 100, unit: 'µV' },
				{ metric: 'snDb', channel: 'left', op: 'ge', value: 90, unit: 'dB' },
				{ metric: 'dcOffsetV', channel: 'left', op: 'le', value: 50, unit: 'mV' }
			],
			m
		);
		expect(checks.map((c) => c.pass)).toEqual([false, true, true, true]);
		expect(checks[0].note).toBe('not measured');
		expect(checks[1].measured).toBeCloseTo(50, 9); // A-weighted noise with an A-weighted profile
		expect(checks[3].measured).toBeCloseTo(12, 9); // |DC| in mV
	});
	it('DC offset is not a reading from an AC-coupled input', () => {
		const m = measurementsFromResults([base], {}, [], 'none');
		const [c] = evaluateLimits(
			[{ metric: 'dcOffsetV', channel: 'left', op: 'le', value: 50, unit: 'mV' }],
			m
		);
		expect(c.pass).toBe(false);
		expect(c.measured).toBeNull();
	});
	it('IMD limits read the IMD result', () => {
		const m = measurementsFromResults([{ ...base, imd: { imdPercent: 0.02, imdDb: -74 } }], {}, [], 'none');
		const [c] = evaluateLimits(
			[{ metric: 'imdPercent', channel: 'left', op: 'le', value: 0.05, unit: '%' }],
			m
		);
		expect(c.pass).toBe(true);
	});
});
