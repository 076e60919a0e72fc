// Sources named beside the checks are described in tests/REFERENCES.md § 18 (bench procedures).
import { describe, expect, it } from 'vitest';
import {
	cancelRamp,
	flatness,
	interpolateCrossing,
	phonoDeviation,
	relativeLevelsDb,
	replayRamp,
	startRamp,
	stepRamp,
	sweepFrequencies,
	wattsInto,
	type RampPlan
} from './index';

describe('sweep frequencies', () => {
	it('follow the base-ten third-octave series of IEC 61260-1 from 20 Hz to 20 kHz', () => {
		const f = sweepFrequencies(3);
		// fm = 1000 · 10^(x/10), x = −17 … 13 (IEC 61260-1:2014 §5.2, base-ten system): 31 bands.
		expect(f).toHaveLength(31);
		expect(f[0]).toBeCloseTo(19.95, 2); // 1000 · 10^(−1.7), the band nominally called 20 Hz
		expect(f.at(-1)).toBeCloseTo(19953, 0); // 1000 · 10^(1.3), nominally 20 kHz
		expect(f).toContain(1000);
		expect(f[f.indexOf(1000) - 3]).toBeCloseTo(501.2, 1); // 1000 · 10^(−0.3): the "500 Hz" band
	});

	it('at 6 and 12 points per octave split each third-octave step evenly', () => {
		expect(sweepFrequencies(6)).toHaveLength(61); // x = −34 … 26 on 10^(x/20)
		expect(sweepFrequencies(12)).toHaveLength(121);
		const f12 = sweepFrequencies(12);
		const i = f12.indexOf(1000);
		// Twelve steps make an octave within the base-ten series' 0.2 % (10^0.3 = 1.9953).
		expect(f12[i + 12] / f12[i]).toBeCloseTo(1.9953, 3);
	});
});

describe('levels and flatness', () => {
	it('refer every level to the 1 kHz step in dB (20·lg of the voltage ratio)', () => {
		const rel = relativeLevelsDb([
			{ frequencyHz: 100, levelVrms: [2, 0.5] },
			{ frequencyHz: 1000, levelVrms: [1, 1] },
			{ frequencyHz: 10_000, levelVrms: [null, 1] }
		]);
		expect(rel[0][0]).toBeCloseTo(6.0206, 4); // 20·lg 2
		expect(rel[0][1]).toBeCloseTo(-6.0206, 4);
		expect(rel[1]).toEqual([0, 0]);
		expect(rel[2][0]).toBeNull();
		expect(() => relativeLevelsDb([{ frequencyHz: 500, levelVrms: [1] }])).toThrow(/1 kHz/);
	});

	it('reports ± half the spread over the chosen band, worked by hand', () => {
		const fl = flatness([20, 100, 1000, 10_000, 20_000], [-3, -0.2, 0, 0.4, -1], 100, 10_000);
		// In band: −0.2, 0, +0.4 → max 0.4, min −0.2, ± 0.3 dB over 3 points.
		expect(fl).toEqual({ maxDb: 0.4, minDb: -0.2, plusMinusDb: expect.closeTo(0.3, 9), points: 3 });
		expect(flatness([20], [null], 10, 30)).toBeNull();
	});
});

describe('phono equalisation', () => {
	const freqs = [20, 1000, 20_000];
	it('fed flat, an output that follows the RIAA playback table deviates by nothing', () => {
		// RIAA playback re 1 kHz: +19.27 dB at 20 Hz, −19.62 dB at 20 kHz (IEC 60098 / RIAA table).
		const table = [19.27, 0, -19.62];
		const steps = freqs.map((f, i) => ({
			frequencyHz: f,
			levelVrms: [10 ** (table[i] / 20), 10 ** (table[i] / 20)]
		}));
		const r = phonoDeviation(steps, {
			feed: 'flat',
			iecRolloff: false,
			loadingOhms: 47_000,
			loadingPicofarads: 150
		});
		expect(r.expectedDb[0]).toBeCloseTo(19.27, 2);
		expect(r.maxDeviationDb[0]!).toBeLessThan(0.01); // the table's own rounding
		expect(r.channelMatchDb).toBeCloseTo(0, 9);
	});

	it('with the IEC 7950 µs term the expected 20 Hz level drops by about 3 dB', () => {
		// The extra high-pass has its −3 dB point at 1/(2π·7950 µs) = 20.02 Hz (IEC 60098 amendment).
		const steps = freqs.map((f) => ({ frequencyHz: f, levelVrms: [1] }));
		const plain = phonoDeviation(steps, {
			feed: 'flat',
			iecRolloff: false,
			loadingOhms: 47_000,
			loadingPicofarads: 100
		});
		const iec = phonoDeviation(steps, {
			feed: 'flat',
			iecRolloff: true,
			loadingOhms: 47_000,
			loadingPicofarads: 100
		});
		expect(plain.expectedDb[0] - iec.expectedDb[0]).toBeCloseTo(3.01, 1);
	});

	it('through an inverse network, its known error is removed and a channel difference shows as matching', () => {
		const steps = [
			{ frequencyHz: 20, levelVrms: [10 ** (0.3 / 20), 10 ** (-0.2 / 20)] },
			{ frequencyHz: 1000, levelVrms: [1, 1] }
		];
		const r = phonoDeviation(steps, {
			feed: 'inverse-network',
			iecRolloff: false,
			loadingOhms: 47_000,
			loadingPicofarads: 150,
			networkErrorDb: [0.3, 0]
		});
		expect(r.deviationDb[0][0]).toBeCloseTo(0, 9); // the network fed 0.3 dB hot: the unit is right
		expect(r.deviationDb[0][1]).toBeCloseTo(-0.5, 9);
		expect(r.channelMatchDb).toBeCloseTo(0.5, 9);
	});
});

describe('maximum power ramp', () => {
	const plan: RampPlan = {
		frequencyHz: 1000,
		loadOhms: 8,
		thresholdPercent: 0.1,
		startLevelVrms: 0.1,
		stepDb: 1,
		maxLevelVrms: 2,
		maxSteps: 60,
		ratedPowerW: 60,
		channels: 2
	};

	it('steps up by the chosen dB until both channels cross, interpolating the crossing (P = V²/R)', () => {
		const { state, action } = startRamp(plan);
		expect(action).toEqual({ kind: 'set-level', levelVrms: 0.1 });
		let a = stepRamp(state, { levelVrms: 0.1, outputVrms: [20, 20], thdnPercent: [0.05, 0.02] });
		expect(a.kind).toBe('set-level');
		if (a.kind === 'set-level') expect(a.levelVrms).toBeCloseTo(0.1 * 10 ** (1 / 20), 12);
		a = stepRamp(state, { levelVrms: 0.1122, outputVrms: [22, 22], thdnPercent: [0.15, 0.08] });
		// Left crossed: 20 V + (0.1 − 0.05)/(0.15 − 0.05) · 2 V = 21 V → 21²/8 = 55.125 W.
		expect(state.crossings[0]!.outputVrms).toBeCloseTo(21, 9);
		expect(state.crossings[0]!.powerW).toBeCloseTo(55.125, 9);
		expect(a.kind).toBe('set-level');
		a = stepRamp(state, { levelVrms: 0.126, outputVrms: [23, 23], thdnPercent: [2, 0.12] });
		// Right: 22 + (0.1 − 0.08)/(0.12 − 0.08) · 1 = 22.5 V → 63.28 W; both crossed, the ramp stops at zero.
		expect(state.crossings[1]!.powerW).toBeCloseTo(22.5 ** 2 / 8, 9);
		expect(a).toEqual({ kind: 'stop', levelVrms: 0, reason: 'threshold' });
		// Once stopped it only ever answers zero.
		expect(stepRamp(state, { levelVrms: 1, outputVrms: [1, 1], thdnPercent: [0, 0] }).levelVrms).toBe(0);
	});

	it('stops at zero on an output above twice the rating, on cancel, at the maximum level and with no signal', () => {
		const over = startRamp(plan).state;
		// 31 V into 8 Ω = 120.1 W > 2 × 60 W.
		expect(stepRamp(over, { levelVrms: 0.5, outputVrms: [31, 10], thdnPercent: [0.01, 0.01] })).toEqual({
			kind: 'stop',
			levelVrms: 0,
			reason: 'over-rated'
		});
		const c = startRamp(plan).state;
		expect(cancelRamp(c)).toEqual({ kind: 'stop', levelVrms: 0, reason: 'cancelled' });
		const top = startRamp({ ...plan, maxLevelVrms: 0.105 }).state;
		expect(stepRamp(top, { levelVrms: 0.1, outputVrms: [2, 2], thdnPercent: [0.01, 0.01] }).kind).toBe(
			'stop'
		);
		expect(top.reason).toBe('max-level');
		const dead = startRamp(plan).state;
		expect(stepRamp(dead, { levelVrms: 0.1, outputVrms: [0, null], thdnPercent: [null, null] }).kind).toBe(
			'stop'
		);
		expect(dead.reason).toBe('no-signal');
	});

	it('replays a saved ramp to the same crossings, and interpolation is linear by hand', () => {
		const readings = [
			{ levelVrms: 0.1, outputVrms: [20, 20], thdnPercent: [0.05, 0.05] },
			{ levelVrms: 0.112, outputVrms: [22, 22], thdnPercent: [0.15, 0.15] }
		];
		const s = replayRamp(plan, readings);
		expect(s.reason).toBe('threshold');
		expect(s.crossings.map((c) => c!.outputVrms)).toEqual([21, 21]);
		expect(interpolateCrossing(10, 0.2, 20, 0.6, 0.3)).toBeCloseTo(12.5, 12);
		expect(wattsInto(20, 8)).toBe(50); // 20²/8
	});
});
