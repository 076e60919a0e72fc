// Sources named beside the checks are described in tests/REFERENCES.md § 18 (bench procedures).
// The front-panel meter check: power from the output voltage (P = V²/R), the meter's error in dB and
// percent, and the guided run against the bridge simulator (its gain is what the run must learn).
import { describe, expect, it } from 'vitest';
import { DEFAULT_SIMULATOR_STATE } from '$lib/bridge/protocol';
import { analyzeFrames } from '$lib/dsp/analyzer';
import { SIM_FULL_SCALE_VOLTS, Simulator } from '../../../bridge/sim/simulator';
import { evaluateMeter, levelForPower, meterPowers } from './meter';
import { generatorFor, runMeter, type ProcedureIO } from './runner';
import { stabilityVerdict } from './stability';

describe('meter error', () => {
	it('measured power is V²/R and the error is 10·lg of the power ratio, worked by hand', () => {
		const r = evaluateMeter(
			[
				// 8.944 V into 8 Ω = 10.0 W; a meter showing 12.589 W reads +1.00 dB (10·lg 1.2589), +25.9 %.
				{ targetW: 10, generatorVrms: 0.45, outputVrms: Math.sqrt(80), indicatedW: 12.589 },
				// 2 V into 8 Ω = 0.5 W; the meter shows 0.4 W: 10·lg 0.8 = −0.969 dB, −20 %.
				{ targetW: 0.5, generatorVrms: 0.1, outputVrms: 2, indicatedW: 0.4 },
				{ targetW: 1, generatorVrms: 0.14, outputVrms: Math.sqrt(8), indicatedW: null }
			],
			8
		);
		expect(r.points[0].measuredW).toBeCloseTo(10, 9);
		expect(r.points[0].errorDb).toBeCloseTo(1.0, 3);
		expect(r.points[0].errorPercent).toBeCloseTo(25.89, 2);
		expect(r.points[1].errorDb).toBeCloseTo(-0.9691, 4);
		expect(r.points[1].errorPercent).toBeCloseTo(-20, 9);
		expect(r.points[2].errorDb).toBeNull();
		expect(r.maxErrorDb).toBeCloseTo(1.0, 3);
		expect(r.maxErrorPercent).toBeCloseTo(25.89, 2);
	});

	it('offers the default powers up to the rating, and the level for a power is √(P·R)/gain', () => {
		expect(meterPowers(25)).toEqual([0.1, 0.5, 1, 5, 10, 25]);
		expect(levelForPower(50, 8, 20)).toBeCloseTo(1, 12); // √400 = 20 V out, gain 20
	});

	it('stability: only sustained oscillation fails (common practice)', () => {
		expect(stabilityVerdict('none')).toBe('pass');
		expect(stabilityVerdict('ringing')).toBe('pass');
		expect(stabilityVerdict('oscillation')).toBe('fail');
	});
});

describe('meter check run against the simulator', () => {
	it('learns the gain, sets each power within 1 %, waits for each reading and ends off', async () => {
		const FS = 48_000;
		const N = 16_384;
		const sim = new Simulator({ sampleRateHz: FS, channels: 2, seed: 3, state: DEFAULT_SIMULATOR_STATE });
		let clock = 0;
		const log: string[] = [];
		const io: ProcedureIO = {
			setGenerator(g) {
				const gen = generatorFor(g);
				sim.setGenerator(gen);
				log.push(gen.kind);
			},
			async readAfter(atMs) {
				clock = Math.max(clock, atMs) + 400;
				sim.render(new Float32Array(2 * 4800), 4800);
				const raw = new Float32Array(2 * N);
				sim.render(raw, N);
				const chs = [0, 1].map((c) => Float32Array.from({ length: N }, (_, i) => raw[2 * i + c]));
				const r = analyzeFrames(chs, FS, SIM_FULL_SCALE_VOLTS, { fftSize: N, expectedFrequencyHz: 1000 });
				return {
					frequencyHz: r.channels.map((c) => c.frequencyHz),
					levelVrms: r.channels.map((c) => c.levelVrms),
					thdnPercent: r.channels.map((c) => c.thdnPercent)
				};
			},
			now: () => clock,
			async sleep(ms) {
				clock += ms;
			}
		};
		const asked: number[] = [];
		const powers = [1, 10, 50];
		const steps = await runMeter(
			io,
			{
				powersW: powers,
				loadOhms: 8,
				frequencyHz: 1000,
				probeLevelVrms: 0.01,
				maxLevelVrms: 2,
				channel: 0,
				settleMs: 100,
				ratedPowerW: 100
			},
			new AbortController().signal,
			// A meter that reads 10 % high.
			async ({ measuredW }) => {
				asked.push(measuredW);
				return measuredW * 1.1;
			},
			() => {}
		);
		expect(steps.map((s) => s.targetW)).toEqual(powers);
		for (const s of steps) {
			// The unit is linear well below its clip point (±39 V swing: 95 W into 8 Ω), so P = V²/R hits the target.
			expect(Math.abs(s.outputVrms ** 2 / 8 / s.targetW - 1)).toBeLessThan(0.01);
		}
		const r = evaluateMeter(steps, 8);
		for (const p of r.points) expect(p.errorDb).toBeCloseTo(10 * Math.log10(1.1), 9); // +0.414 dB
		expect(asked).toHaveLength(3);
		expect(log.at(-1)).toBe('off');
	});
});

describe('headlines of the new procedures (job page, compare, customer report)', () => {
	it('say the figure that matters in one line', async () => {
		const { procedureHeadline } = await import('./headline');
		expect(
			procedureHeadline({ kind: 'crosstalk', worstDb: { 'left-to-right': -61.04, 'right-to-left': -79.5 } })
		).toBe('L→R ≤ -61.0 dB · R→L ≤ -79.5 dB');
		expect(
			procedureHeadline({
				kind: 'imd',
				measurements: [
					{ method: 'smpte', channels: [{ imdPercent: 0.2 }, { imdPercent: 0.25 }] },
					{ method: 'twin-tone', channels: [{ imdPercent: 0.04 }, null] }
				]
			})
		).toBe('SMPTE 0.250 % · twin-tone 0.0400 %');
		expect(
			procedureHeadline({ kind: 'meter', maxErrorDb: 0.414, maxErrorPercent: 10, points: [1, 2, 3] })
		).toBe('meter within ±0.41 dB (±10.0 %) over 3 powers');
		expect(
			procedureHeadline({ kind: 'stability', observed: 'ringing', loadOhms: 8, capacitanceMicrofarads: 2 })
		).toBe('damped ringing into 8 Ω ∥ 2 µF');
	});
});
