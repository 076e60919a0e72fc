// The bench runner against a fake unit: every run ends with the generator off (cancel included),
// a sweep reads each step after it settles, and the ramp stops at the threshold. Plain physics
// (P = V²/R, 20·lg of a voltage ratio); the unit's behaviour is invented for the test.
import { describe, expect, it } from 'vitest';
import { runRamp, runSweep, type ProcedureIO } from './runner';
import { relativeLevelsDb, sweepFrequencies } from './sweep';

/** A unit with 20× voltage gain, −3 dB at 20 kHz (one pole), clipping softly above 25 V out. */
function fakeUnit() {
	let clock = 0;
	let gen: { frequencyHz: number; levelVrms: number } | null = null;
	const log: ({ frequencyHz: number; levelVrms: number } | null)[] = [];
	const io: ProcedureIO = {
		setGenerator(g) {
			if (g && !('frequencyHz' in g)) throw new Error('the fake unit takes sines only');
			gen = g;
			log.push(g);
		},
		async readAfter(atMs) {
			clock = Math.max(clock, atMs) + 50;
			if (!gen) return { frequencyHz: [null, null], levelVrms: [0, 0], thdnPercent: [null, null] };
			const pole = 1 / Math.sqrt(1 + (gen.frequencyHz / 20_000) ** 2);
			const out = 20 * gen.levelVrms * pole;
			const thdn = out < 25 ? 0.01 : 0.01 + (out - 25) * 2;
			return {
				frequencyHz: [gen.frequencyHz, gen.frequencyHz],
				levelVrms: [out, out * 0.99],
				thdnPercent: [thdn, thdn]
			};
		},
		now: () => clock,
		async sleep(ms) {
			clock += ms;
		}
	};
	return { io, log };
}

describe('runner', () => {
	it('sweeps every step after it settles and turns the generator off at the end', async () => {
		const { io, log } = fakeUnit();
		const steps = await runSweep(
			io,
			{ frequenciesHz: sweepFrequencies(3), levelVrms: 0.1, settleMs: 500, channels: 2 },
			new AbortController().signal,
			() => {}
		);
		expect(steps).toHaveLength(31);
		const rel = relativeLevelsDb(steps);
		// One pole at 20 kHz: −3.01 dB there (20·lg(1/√2)), relative to 1 kHz's −0.01 dB.
		expect(rel.at(-1)![0]).toBeCloseTo(
			20 * Math.log10(1 / Math.sqrt(1 + (19_953 / 20_000) ** 2)) + 0.0108,
			1
		);
		expect(log.at(-1)).toBeNull();
	});

	it('a cancelled sweep still leaves the generator off', async () => {
		const { io, log } = fakeUnit();
		const ctl = new AbortController();
		await expect(
			runSweep(
				io,
				{ frequenciesHz: [100, 1000, 10_000], levelVrms: 0.1, settleMs: 10, channels: 2 },
				ctl.signal,
				(n) => {
					if (n === 1) ctl.abort();
				}
			)
		).rejects.toThrow(/Cancelled/);
		expect(log.at(-1)).toBeNull();
	});

	it('ramps until THD+N crosses the threshold, then sets zero; cancel also ends at zero', async () => {
		const { io, log } = fakeUnit();
		const plan = {
			frequencyHz: 1000,
			loadOhms: 8,
			thresholdPercent: 1,
			startLevelVrms: 1,
			stepDb: 0.5,
			maxLevelVrms: 3,
			maxSteps: 60,
			ratedPowerW: 100,
			channels: 2
		};
		const r = await runRamp(io, plan, 100, new AbortController().signal, () => {});
		expect(r.state.reason).toBe('threshold');
		// The crossing sits just above the 25 V knee: THD+N 1 % at 25.495 V → 81.2 W into 8 Ω (P = V²/R).
		expect(r.state.crossings[0]!.outputVrms).toBeGreaterThan(25);
		expect(r.state.crossings[0]!.outputVrms).toBeLessThan(26.2);
		expect(r.state.crossings[0]!.powerW).toBeCloseTo(r.state.crossings[0]!.outputVrms ** 2 / 8, 9);
		expect(log.at(-1)).toBeNull();

		// A reading straddling the level change (a spurious 5 % at 20 V) is confirmed on a later analysis.
		const glitchy = fakeUnit();
		let glitched = false;
		const read = glitchy.io.readAfter;
		glitchy.io.readAfter = async (atMs, signal) => {
			const real = await read(atMs, signal);
			if (!glitched && (real.levelVrms[0] ?? 0) > 19) {
				glitched = true;
				return { ...real, thdnPercent: [5, 5] };
			}
			return real;
		};
		const g = await runRamp(glitchy.io, plan, 100, new AbortController().signal, () => {});
		expect(glitched).toBe(true);
		expect(g.state.crossings[0]!.outputVrms).toBeGreaterThan(25); // not at the glitch

		const ctl = new AbortController();
		const c = await runRamp(io, plan, 100, ctl.signal, (s) => {
			if (s.steps.length === 2) ctl.abort();
		});
		expect(c.cancelled).toBe(true);
		expect(c.state.reason).toBe('cancelled');
		expect(log.at(-1)).toBeNull();
	});
});
