// Sources named beside the checks are described in tests/REFERENCES.md § 18 (bench procedures).
// Crosstalk and IMD procedures run end to end against the bridge simulator (the same runner the bench
// uses, the measurement core reading each step), and answers worked out from what the simulator
// injects: its crosstalk path and its output stage's 2nd- and 3rd-order curvature.
import { describe, expect, it } from 'vitest';
import { DEFAULT_SIMULATOR_STATE, OUTPUT_HEADROOM_V, type SimulatorState } from '$lib/bridge/protocol';
import { analyzeFrames } from '$lib/dsp/analyzer';
import { stimulusFromGenerator } from '$lib/workers/analysis-messages';
import {
	CURVE_A2,
	CURVE_A3,
	SIM_FULL_SCALE_VOLTS,
	Simulator,
	crosstalk
} from '../../../bridge/sim/simulator';
import { generatorFor, runCrosstalk, runImd, type ProcedureIO } from './runner';
import { crosstalkPlan, evaluateCrosstalk } from './crosstalk';
import { evaluateImd, imdProductPlan } from './imd';

const FS = 48_000;
const N = 16_384;

/** A ProcedureIO on the simulator: each read renders a settled window and analyses it like the bench. */
function simulatorBench(state: SimulatorState) {
	const sim = new Simulator({ sampleRateHz: FS, channels: 2, seed: 7, state, timeScale: 1 });
	let gen = generatorFor(null);
	let clock = 0;
	const log: string[] = [];
	const io: ProcedureIO = {
		setGenerator(g) {
			gen = generatorFor(g);
			sim.setGenerator(gen);
			log.push(gen.kind);
		},
		async readAfter(atMs) {
			clock = Math.max(clock, atMs);
			const settle = new Float32Array(2 * 4800);
			sim.render(settle, 4800);
			const raw = new Float32Array(2 * N);
			sim.render(raw, N);
			clock += (1000 * (N + 4800)) / FS;
			const chs = [0, 1].map((c) => Float32Array.from({ length: N }, (_, i) => raw[2 * i + c]));
			const st = stimulusFromGenerator(gen);
			const r = analyzeFrames(chs, FS, SIM_FULL_SCALE_VOLTS, {
				fftSize: N,
				stimulus: st.stimulus,
				expectedFrequencyHz: st.expectedFrequencyHz ?? undefined,
				imdF1Hz: st.imdF1Hz ?? undefined,
				imdF2Hz: st.imdF2Hz ?? undefined,
				mainsHz: state.mainsHz
			});
			return {
				frequencyHz: r.channels.map((c) => c.frequencyHz),
				levelVrms: r.channels.map((c) => c.levelVrms),
				thdnPercent: r.channels.map((c) => c.thdnPercent),
				crosstalkDb: r.crosstalkDb ?? null,
				imd: r.channels.map((c) => c.imd)
			};
		},
		now: () => clock,
		async sleep(ms) {
			clock += ms;
		}
	};
	return { io, log };
}

describe('crosstalk procedure against the simulator', () => {
	it('reads the injected crosstalk at 100 Hz, 1 kHz and 10 kHz in both directions within 0.1 dB', async () => {
		// 60 Hz mains: 100 Hz is then no hum harmonic (with 50 Hz mains its ripple hum adds to the leak).
		const { io, log } = simulatorBench({ ...DEFAULT_SIMULATOR_STATE, mainsHz: 60 });
		const steps = await runCrosstalk(
			io,
			{ steps: crosstalkPlan(), levelVrms: 0.5, settleMs: 100 },
			new AbortController().signal,
			() => {}
		);
		const r = evaluateCrosstalk(steps);
		expect(steps).toHaveLength(6);
		for (const [i, s] of steps.entries()) {
			// What the simulator injects: |H_xt(f)| in dB, the same path both ways (20·lg of the ratio).
			const expected = 20 * Math.log10(Math.hypot(...crosstalk(s.frequencyHz)));
			expect(Math.abs(r.stepsDb[i] - expected), `${s.direction} ${s.frequencyHz} Hz`).toBeLessThan(0.1);
		}
		// −80 dB at 1 kHz rising 6 dB/octave: 10 kHz is the worst, ≈ −60 dB.
		expect(r.worstDb['left-to-right']).toBeCloseTo(-60, 0);
		expect(r.worstOverallDb).toBe(Math.max(...r.stepsDb));
		// Each step drives one side only, and the run ends with the generator off.
		expect(log.slice(0, -1).every((k) => k === 'sine')).toBe(true);
		expect(log.at(-1)).toBe('off');
	});
});

describe('IMD procedure against the simulator', () => {
	// The output stage adds swing·(a2·r² + a3·r³), r = v/swing (bridge/sim/simulator.ts): y = x + c2·x² + c3·x³.
	const swing = DEFAULT_SIMULATOR_STATE.railVolts - OUTPUT_HEADROOM_V;
	const c2 = CURVE_A2 / swing;
	const c3 = CURVE_A3 / swing ** 2;

	it('SMPTE and twin-tone read what the output stage curvature makes (trigonometric expansion)', async () => {
		const { io, log } = simulatorBench(DEFAULT_SIMULATOR_STATE);
		const runs = await runImd(
			io,
			{ methods: ['smpte', 'twin-tone'], levelVrms: 1, settleMs: 100, channels: 2 },
			new AbortController().signal,
			() => {}
		);
		expect(runs.map((r) => r.method)).toEqual(['smpte', 'twin-tone']);
		for (const run of runs)
			for (const reading of run.channels) {
				expect(reading).not.toBeNull();
				const f = evaluateImd(run.method, reading!);
				const a1 = reading!.tone1Vrms * Math.SQRT2;
				const a2 = reading!.tone2Vrms * Math.SQRT2;
				let d2: number;
				let d3: number;
				if (run.method === 'smpte') {
					// (A1cos ω1t + A2cos ω2t)²: sidebands c2·A1·A2 each at f2 ± f1 → d2 = 2·c2·A1 (re A2);
					// x³: (3/4)·c3·A1²·A2 each at f2 ± 2f1 → d3 = (3/2)·c3·A1² (SMPTE RP120 / IEC 60268-3 sums).
					d2 = 2 * c2 * a1;
					d3 = 1.5 * c3 * a1 * a1;
				} else {
					// Difference tone c2·A1·A2 at f2 − f1; (3/4)·c3·A1²·A2 and (3/4)·c3·A1·A2² at 2f1 − f2, 2f2 − f1,
					// each re A1 + A2 (IEC 60268-3 difference-frequency convention).
					d2 = (c2 * a1 * a2) / (a1 + a2);
					d3 = 0.75 * c3 * a1 * a2;
				}
				expect(Math.abs(f.d2Percent / (100 * d2) - 1), `${run.method} d2`).toBeLessThan(0.02);
				expect(Math.abs(f.d3Percent / (100 * d3) - 1), `${run.method} d3`).toBeLessThan(0.02);
				expect(f.imdPercent).toBeCloseTo(Math.hypot(f.d2Percent, f.d3Percent), 12);
				expect(f.imdDb).toBeCloseTo(20 * Math.log10(f.imdPercent / 100), 12);
			}
		// SMPTE at 1 V: the 60 Hz tone is four times the 7 kHz one (RP120 4:1).
		const sm = runs[0].channels[0]!;
		expect(sm.tone1Vrms / sm.tone2Vrms).toBeCloseTo(4, 1);
		expect(log).toEqual(['smpte', 'twin-tone', 'off']);
	});
});

describe('IMD figures from a signal with a known IMD, synthesised here', () => {
	it('sidebands of known size come back through the product plan and evaluation', () => {
		// SMPTE: 0.25 carrier, sidebands 0.0025 each (2nd) and 0.001 each (3rd): d2 = 2 %, d3 = 0.8 %,
		// IMD = √(2² + 0.8²) = 2.154 % (sum within an order, rss across orders; IEC 60268-3).
		const plan = imdProductPlan('smpte');
		expect(plan.map((p) => p.frequencyHz)).toEqual([6940, 7060, 6880, 7120]);
		const f = evaluateImd('smpte', {
			tone1Vrms: 1,
			tone2Vrms: 0.25,
			productVrms: [0.0025, 0.0025, 0.001, 0.001]
		});
		expect(f.d2Percent).toBeCloseTo(2, 9);
		expect(f.d3Percent).toBeCloseTo(0.8, 9);
		expect(f.imdPercent).toBeCloseTo(2.15407, 4);
		// Twin-tone 0.3 + 0.3: 1 kHz at 0.006 → 1 % of 0.6; 18 and 21 kHz at 0.0015 each → 0.5 %.
		expect(imdProductPlan('twin-tone').map((p) => p.frequencyHz)).toEqual([1000, 18_000, 21_000]);
		const t = evaluateImd('twin-tone', {
			tone1Vrms: 0.3,
			tone2Vrms: 0.3,
			productVrms: [0.006, 0.0015, 0.0015]
		});
		expect(t.d2Percent).toBeCloseTo(1, 9);
		expect(t.d3Percent).toBeCloseTo(0.5, 9);
		expect(t.imdDb).toBeCloseTo(20 * Math.log10(Math.hypot(0.01, 0.005)), 9); // −39.03 dB
		expect(() => evaluateImd('smpte', { tone1Vrms: 1, tone2Vrms: 0.25, productVrms: [0.1] })).toThrow(
			/4 products/
		);
	});

	it('crosstalk steps are 20·lg of the leak over the driven level', () => {
		const r = evaluateCrosstalk([
			{ frequencyHz: 1000, direction: 'left-to-right', drivenVrms: 10, leakVrms: 0.001 }, // −80 dB
			{ frequencyHz: 1000, direction: 'right-to-left', drivenVrms: 10, leakVrms: 0.01 } // −60 dB
		]);
		expect(r.stepsDb[0]).toBeCloseTo(-80, 9);
		expect(r.worstDb['right-to-left']).toBeCloseTo(-60, 9);
		expect(r.worstOverallDb).toBeCloseTo(-60, 9);
	});
});
