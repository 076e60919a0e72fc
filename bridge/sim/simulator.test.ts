// Known answers for the simulator: gain, clipping at the rails, RIAA, hum, noise, faults
// and the thermal model. Levels are measured with a single-bin DFT over whole periods.
import { describe, expect, it } from 'vitest';
import {
	DEFAULT_SIMULATOR_STATE,
	OUTPUT_HEADROOM_V,
	applySimPatch,
	type GeneratorState,
	type SimMessage,
	type SimulatorState
} from '../../src/lib/bridge/protocol';
import { Simulator, SIM_FULL_SCALE_VOLTS } from './simulator';
import {
	AmplifierThermal,
	HEATSINK_RTH_K_PER_W,
	HEATSINK_TAU_S,
	NOMINAL_IDLE_CURRENT_A,
	ThermalNode,
	blockSums
} from './thermal';
import { channelVolts, db, rms, thd, toneAmplitude } from '../testing';

const FS = 48_000;

function state(patch: Omit<SimMessage, 'v' | 'id' | 'type'> = {}): SimulatorState {
	return applySimPatch(DEFAULT_SIMULATOR_STATE, patch);
}

function capture(
	st: SimulatorState,
	generator: GeneratorState,
	opts: { seconds?: number; settleS?: number; seed?: number } = {}
): { left: Float64Array; right: Float64Array; raw: Float32Array } {
	const sim = new Simulator({ sampleRateHz: FS, channels: 2, seed: opts.seed ?? 1, state: st, generator });
	const settle = Math.round((opts.settleS ?? 0.1) * FS);
	if (settle) sim.render(new Float32Array(settle * 2), settle);
	const n = Math.round((opts.seconds ?? 1) * FS);
	const raw = new Float32Array(n * 2);
	sim.render(raw, n);
	return {
		left: channelVolts(raw, 2, 0, SIM_FULL_SCALE_VOLTS),
		right: channelVolts(raw, 2, 1, SIM_FULL_SCALE_VOLTS),
		raw
	};
}

const sine = (frequencyHz: number, levelVrms: number, drive?: 'left' | 'right'): GeneratorState => ({
	kind: 'sine',
	frequencyHz,
	levelVrms,
	...(drive ? { drive } : {})
});

/** Output rms of the fundamental. */
const vrmsAt = (x: Float64Array, f: number) => toneAmplitude(x, f, FS) / Math.SQRT2;

describe('simulator gain', () => {
	it.each([
		[0.1, 26],
		[0.5, 20],
		[1, 0],
		[2, -20],
		[0.05, 32.5]
	])('%f V rms at 1 kHz with volume %f dB gives level × 10^(dB/20)', (levelVrms, volumeDb) => {
		const { left, right } = capture(state({ volumeDb }), sine(1000, levelVrms));
		const expected = levelVrms * 10 ** (volumeDb / 20);
		expect(Math.abs(db(vrmsAt(left, 1000) / expected))).toBeLessThan(0.02);
		expect(Math.abs(db(vrmsAt(right, 1000) / expected))).toBeLessThan(0.02);
	});

	it('an EQ band set to +6 dB raises its centre by 6 dB and leaves far bands alone', () => {
		const flat = capture(state(), sine(1000, 0.1));
		const boosted = capture(state({ eqBand: { index: 5, gainDb: 6 } }), sine(1000, 0.1));
		// RBJ peaking section: gain at the centre frequency equals the set gain (audio EQ cookbook).
		expect(db(vrmsAt(boosted.left, 1000) / vrmsAt(flat.left, 1000))).toBeCloseTo(6, 1);
		const far = capture(state({ eqBand: { index: 5, gainDb: 6 } }), sine(16000, 0.1));
		const farFlat = capture(state(), sine(16000, 0.1));
		expect(Math.abs(db(vrmsAt(far.left, 16000) / vrmsAt(farFlat.left, 16000)))).toBeLessThan(0.3);
	});

	it('the low filter is −3 dB at its corner (2nd-order Butterworth, textbook)', () => {
		const on = capture(state({ lowFilter: { enabled: true, frequencyHz: 50 } }), sine(50, 0.1));
		const off = capture(state(), sine(50, 0.1));
		expect(db(vrmsAt(on.left, 50) / vrmsAt(off.left, 50))).toBeCloseTo(-3.01, 1);
	});

	it('drives one channel only and shows realistic crosstalk on the other', () => {
		const { left, right } = capture(state(), sine(1000, 0.5, 'left'));
		const xtDb = db(vrmsAt(right, 1000) / vrmsAt(left, 1000));
		// −80 dB at 1 kHz is the design value (from memory: typical of a good receiver).
		expect(xtDb).toBeGreaterThan(-85);
		expect(xtDb).toBeLessThan(-75);
	});
});

describe('simulator output stage', () => {
	it('has realistic THD at a few watts: 0.005–0.05 % (from memory: a healthy class-AB amplifier)', () => {
		// 4 W into 8 Ω = 5.657 V rms; volume 26 dB → input 0.2835 V rms.
		const vin = Math.sqrt(4 * 8) / 10 ** (26 / 20);
		const { left } = capture(state(), sine(1000, vin), { seconds: 0.5 });
		const t = thd(left, 1000, FS);
		expect(t).toBeGreaterThan(0.00003);
		expect(t).toBeLessThan(0.0005);
	});

	it('crossover distortion grows as the bias drops', () => {
		const vin = Math.sqrt(1 * 8) / 10 ** (26 / 20); // 1 W into 8 Ω
		const good = thd(capture(state(), sine(1000, vin), { seconds: 0.5 }).left, 1000, FS, 15);
		const half = thd(
			capture(state({ biasPercent: 50 }), sine(1000, vin), { seconds: 0.5 }).left,
			1000,
			FS,
			15
		);
		const fault = thd(
			capture(state({ faults: { underBias: true } }), sine(1000, vin), { seconds: 0.5 }).left,
			1000,
			FS,
			15
		);
		expect(half).toBeGreaterThan(2 * good);
		expect(fault).toBeGreaterThan(2 * half);
		expect(fault).toBeGreaterThan(0.0005); // clearly visible: > 0.05 %
	});

	// Rated power at 1 % THD sits at the clip point: P = V²/R with V the rms of a sine peaking at
	// the clip voltage (rails minus headroom). The soft knee costs a few per cent.
	it.each([
		[42, 8],
		[42, 4],
		[30, 8]
	])(
		'with ±%f V rails into %f Ω the 1-percent-THD power follows P = V²/R at the clip voltage',
		(railVolts, loadOhms) => {
			const st = state({ railVolts, loadOhms, volumeDb: 30 });
			const gain = 10 ** (30 / 20);
			const thdAt = (vin: number) =>
				thd(capture(st, sine(1000, vin), { seconds: 0.05, settleS: 0 }).left, 1000, FS);
			let lo = 0.1;
			let hi = 3;
			for (let i = 0; i < 22; i++) {
				const mid = (lo + hi) / 2;
				if (thdAt(mid) < 0.01) lo = mid;
				else hi = mid;
			}
			const pAt1Pct = (lo * gain) ** 2 / loadOhms;
			const vClip = railVolts - OUTPUT_HEADROOM_V;
			const pClip = (vClip / Math.SQRT2) ** 2 / loadOhms;
			expect(pAt1Pct / pClip).toBeGreaterThan(0.9);
			expect(pAt1Pct / pClip).toBeLessThan(1.1);
			// Overdriven hard, the peaks flatten at the clip voltage.
			const { left } = capture(st, sine(1000, 5), { seconds: 0.05 });
			const peak = Math.max(...left.map(Math.abs));
			expect(peak / vClip).toBeGreaterThan(0.97);
			expect(peak / vClip).toBeLessThan(1.005);
		}
	);
});

describe('simulator phono input', () => {
	// IEC 60098 / RIAA playback, dB re 1 kHz (REFERENCES.md §2, computed from the time constants).
	const table: [number, number][] = [
		[20, 19.27],
		[50, 16.95],
		[100, 13.09],
		[200, 8.22],
		[500, 2.65],
		[2000, -2.59],
		[5000, -8.21],
		[10000, -13.73],
		[20000, -19.62]
	];

	it('without the inverse network, the response follows the RIAA playback table (IEC 60098)', () => {
		const st = state({ input: 'phono', inverseRiaaNetwork: false, volumeDb: 0 });
		const ref = vrmsAt(capture(st, sine(1000, 0.001)).left, 1000);
		for (const [f, riaaDb] of table) {
			const out = vrmsAt(capture(st, sine(f, 0.001)).left, f);
			// Allowance: the input coupling (1.5 Hz) and amplifier bandwidth (150 kHz) poles add < 0.08 dB.
			expect(Math.abs(db(out / ref) - riaaDb), `${f} Hz`).toBeLessThan(0.1); // IEC 60098 RIAA playback table (REFERENCES.md §2)
		}
	});

	it('through the inverse-RIAA network, phono reads flat: deviation from RIAA ≈ 0 (IEC 60098)', () => {
		const st = state({ input: 'phono', inverseRiaaNetwork: true, volumeDb: 0 });
		for (const [f] of table) {
			const out = vrmsAt(capture(st, sine(f, 0.5)).left, f);
			expect(Math.abs(db(out / 0.5)), `${f} Hz`).toBeLessThan(0.1); // IEC 60098 RIAA table: record EQ × playback EQ = flat
		}
	});
});

describe('simulator hum and noise', () => {
	it('hum sits at the mains frequency and its harmonics (50 or 60 Hz)', () => {
		for (const [mains, other] of [
			[50, 60],
			[60, 50]
		] as const) {
			const { left } = capture(state({ mainsHz: mains }), { kind: 'off' }, { seconds: 1 });
			const atMains = toneAmplitude(left, mains, FS);
			const atRipple = toneAmplitude(left, 2 * mains, FS);
			const atOther = toneAmplitude(left, other, FS);
			expect(db(atMains / atOther)).toBeGreaterThan(10);
			expect(db(atRipple / toneAmplitude(left, 2 * other, FS))).toBeGreaterThan(10);
		}
	});

	it('a tired filter capacitor raises the ripple hum by more than 20 dB', () => {
		const healthy = capture(state(), { kind: 'off' });
		const tired = capture(state({ faults: { tiredFilterCap: true } }), { kind: 'off' });
		expect(db(toneAmplitude(tired.left, 100, FS) / toneAmplitude(healthy.left, 100, FS))).toBeGreaterThan(20);
	});

	it('idles with a noise floor near −100 dBV and a noisy selector raises one channel', () => {
		const idle = capture(state(), { kind: 'off' });
		const floorDbv = db(rms(idle.left));
		expect(floorDbv).toBeGreaterThan(-106);
		expect(floorDbv).toBeLessThan(-94);
		const noisy = capture(state({ faults: { noisySelector: 'left' } }), { kind: 'off' });
		expect(db(rms(noisy.left) / rms(noisy.right))).toBeGreaterThan(15);
		expect(Math.abs(db(rms(noisy.right) / rms(idle.right)))).toBeLessThan(1.5);
	});

	it('the noise generator produces its level in V rms at unity volume', () => {
		const { left } = capture(state({ volumeDb: 0 }), { kind: 'noise', levelVrms: 0.5 });
		expect(Math.abs(db(rms(left) / 0.5))).toBeLessThan(0.1);
		const pink = capture(
			state({ volumeDb: 0 }),
			{ kind: 'noise', levelVrms: 0.5, color: 'pink' },
			{ seconds: 2 }
		);
		expect(Math.abs(db(rms(pink.left) / 0.5))).toBeLessThan(0.5);
	});
});

describe('simulator faults over time and determinism', () => {
	/** Level of 1 kHz in consecutive 10 ms windows, dB. */
	function windowLevels(x: Float64Array): number[] {
		const w = FS / 100;
		const out: number[] = [];
		for (let i = 0; i + w <= x.length; i += w) out.push(db(toneAmplitude(x.subarray(i, i + w), 1000, FS)));
		return out;
	}
	const spread = (v: number[]) => Math.max(...v) - Math.min(...v);

	it('a scratchy control makes its band jump while moved and settles when left alone', () => {
		const scratch = { enabled: true, band: 5 };
		const moving = capture(
			state({ faults: { scratchyControl: { ...scratch, moving: true } } }),
			sine(1000, 0.2)
		);
		const still = capture(
			state({ faults: { scratchyControl: { ...scratch, moving: false } } }),
			sine(1000, 0.2)
		);
		expect(spread(windowLevels(moving.left))).toBeGreaterThan(3);
		expect(spread(windowLevels(still.left))).toBeLessThan(0.01);
	});

	it('is deterministic for a seed', () => {
		const st = state({
			faults: { noisySelector: 'right', scratchyControl: { enabled: true, moving: true, band: 4 } }
		});
		const a = capture(st, sine(997, 0.3), { seconds: 0.2, seed: 42 });
		const b = capture(st, sine(997, 0.3), { seconds: 0.2, seed: 42 });
		const c = capture(st, sine(997, 0.3), { seconds: 0.2, seed: 43 });
		expect(Buffer.from(a.raw.buffer).equals(Buffer.from(b.raw.buffer))).toBe(true);
		expect(Buffer.from(a.raw.buffer).equals(Buffer.from(c.raw.buffer))).toBe(false);
	});
});

describe('thermal model', () => {
	it('a first-order node settles at ambient + P·Rth and reaches 63.2 % at one time constant (textbook)', () => {
		const node = new ThermalNode(1.2, 300, 25);
		node.step(300, 20, 25);
		// First-order step response: 1 − e^(−1) = 0.632 of the final rise at t = τ.
		expect((node.tempC - 25) / (20 * 1.2)).toBeCloseTo(1 - Math.exp(-1), 9); // first-order system step response, 1 − e^(−t/τ) (textbook)
		for (let i = 0; i < 300; i++) node.step(30, 20, 25);
		expect(node.tempC).toBeCloseTo(25 + 20 * 1.2, 6); // first-order system final value T_amb + P·Rth (textbook)
		// Step size does not change the answer for constant power.
		const fine = new ThermalNode(1.2, 300, 25);
		for (let i = 0; i < 3000; i++) fine.step(0.1, 20, 25);
		expect(fine.tempC).toBeCloseTo(25 + 20 * 1.2 * (1 - Math.exp(-1)), 9); // first-order system step response (textbook)
	});

	it('heatsink dissipation from the simulated output matches the class-B formula plus idle, and the heatsink settles at ambient + P·Rth', () => {
		// One-eighth of 95 W into 8 Ω, the classic preconditioning level.
		const st = state();
		const pOut = (39 * 39) / 16 / 8;
		const vPeak = Math.sqrt(2 * pOut * 8);
		const vin = vPeak / Math.SQRT2 / 10 ** (26 / 20);
		const sim = new Simulator({
			sampleRateHz: FS,
			channels: 2,
			seed: 1,
			state: st,
			generator: sine(1000, vin)
		});
		const block = new Float32Array(4800 * 2); // 100 ms = 100 whole periods
		sim.render(block, 4800);
		const sums = blockSums(block, 2, 4800, [SIM_FULL_SCALE_VOLTS, SIM_FULL_SCALE_VOLTS]);
		// The reusable-output form fills the caller's objects with the same sums.
		const reused = [
			{ sumAbsV: -1, sumSqV: -1, count: -1 },
			{ sumAbsV: -1, sumSqV: -1, count: -1 },
			{ sumAbsV: -1, sumSqV: -1, count: -1 }
		];
		const first = reused[0];
		expect(blockSums(block, 2, 4800, [SIM_FULL_SCALE_VOLTS, SIM_FULL_SCALE_VOLTS], reused)).toBe(reused);
		expect(reused).toEqual(sums);
		expect(reused[0]).toBe(first);
		// Class B, both devices, sine: P_D = 2·Vcc·V̂/(π·R) − V̂²/(2R) (REFERENCES.md §9, Boylestad & Nashelsky).
		const classB = (2 * 42 * vPeak) / (Math.PI * 8) - (vPeak * vPeak) / 16;
		const idle = 2 * 42 * NOMINAL_IDLE_CURRENT_A;
		const thermal = new AmplifierThermal(60);
		thermal.advance(0.1, sums, sim.amplifierParams());
		expect(thermal.lastDissipationW[0] / (classB + idle)).toBeCloseTo(1, 2);
		// Ten time constants of simulated time (τ = 480 s) at 60× is 80 s of stream time.
		for (let i = 0; i < 800; i++) thermal.advance(0.1, sums, sim.amplifierParams());
		const pd = thermal.lastDissipationW[0];
		expect(thermal.heatsinks[0].tempC).toBeCloseTo(thermal.ambientC + pd * HEATSINK_RTH_K_PER_W, 1);
		expect(thermal.elapsedS).toBeCloseTo(801 * 0.1 * 60, 6);
		expect(HEATSINK_TAU_S).toBeGreaterThanOrEqual(180); // several minutes
	});

	it('the heatsink rise reaches 63 % of its final value after one time constant of simulated time', () => {
		const thermal = new AmplifierThermal(60);
		const sums = [
			{ sumAbsV: 10 * 1000, sumSqV: 150 * 1000, count: 1000 },
			{ sumAbsV: 10 * 1000, sumSqV: 150 * 1000, count: 1000 }
		];
		const params = { railVolts: 42, loadOhms: 8, idleCurrentA: NOMINAL_IDLE_CURRENT_A };
		// τ = 480 s simulated = 8 s at 60×, in 0.1 s blocks.
		for (let i = 0; i < 80; i++) thermal.advance(0.1, sums, params);
		const rise = thermal.heatsinks[0].tempC - thermal.ambientC;
		const finalRise = thermal.lastDissipationW[0] * HEATSINK_RTH_K_PER_W;
		expect(rise / finalRise).toBeCloseTo(1 - Math.exp(-1), 6);
	});
});
