// Every simulator fault shows in a reading, under the conditions FAULT_HELP names, measured the
// way the bench measures: the project's analysis library ($lib/dsp) on the simulated samples.
// Expected values come from the simulator's own settings (P = V²/R, dB ratios of its factors).
// Also the overload checks: the rails bound the peak, so a clipped output cannot read more than
// a square wave at the clip voltage, and a hot phono input clips its own stage.
import { describe, expect, it } from 'vitest';
import {
	DEFAULT_SIMULATOR_STATE,
	OUTPUT_HEADROOM_V,
	PHONO_STAGE_CLIP_V,
	RELAY_RESET_HYSTERESIS_C,
	WEAK_DEVICE_MAX_CURRENT_A,
	applySimPatch,
	clipVoltsPeak,
	maxSinePowerW,
	railVoltsForPowerW,
	type GeneratorState,
	type SimMessage,
	type SimulatorState
} from '../../src/lib/bridge/protocol';
import {
	analyzeFrames,
	analyzeChannel,
	steadiness,
	toneLevelAt,
	type AnalysisResult
} from '../../src/lib/dsp';
import { Simulator, SIM_FULL_SCALE_VOLTS, TIRED_CAP_EVEN_FACTOR, TIRED_CAP_ODD_FACTOR } from './simulator';

const FS = 48_000;
const FULL = SIM_FULL_SCALE_VOLTS;
/** 2^16 samples: 1.37 s, a 0.73 Hz bin. */
const N = 65_536;

const state = (patch: Omit<SimMessage, 'v' | 'id' | 'type'> = {}): SimulatorState =>
	applySimPatch(DEFAULT_SIMULATOR_STATE, patch);

const sine = (frequencyHz: number, levelVrms: number): GeneratorState => ({
	kind: 'sine',
	frequencyHz,
	levelVrms
});

/** Generator level (V rms) that gives `powerW` into `loadOhms` at `volumeDb`: P = V²/R. */
const levelForPowerW = (powerW: number, loadOhms = 8, volumeDb = DEFAULT_SIMULATOR_STATE.volumeDb) =>
	Math.sqrt(powerW * loadOhms) / 10 ** (volumeDb / 20);

const db = (ratio: number) => 20 * Math.log10(ratio);

function render(sim: Simulator, n: number): { left: Float32Array; right: Float32Array } {
	const raw = new Float32Array(n * 2);
	sim.render(raw, n);
	const left = new Float32Array(n);
	const right = new Float32Array(n);
	for (let i = 0; i < n; i++) {
		left[i] = raw[2 * i];
		right[i] = raw[2 * i + 1];
	}
	return { left, right };
}

function simulator(st: SimulatorState, generator: GeneratorState, timeScale = 1): Simulator {
	return new Simulator({ sampleRateHz: FS, channels: 2, seed: 1, state: st, generator, timeScale });
}

/** Settle 0.1 s, then analyse N samples of both channels as the bench does. */
function measure(
	st: SimulatorState,
	generator: GeneratorState,
	loadOhms = st.loadOhms
): AnalysisResult & { left: Float32Array; right: Float32Array } {
	const sim = simulator(st, generator);
	render(sim, FS / 10);
	const { left, right } = render(sim, N);
	return { ...analyzeFrames([left, right], FS, FULL, { loadOhms }), left, right };
}

const peakV = (x: Float32Array, sign: 1 | -1) => {
	let m = 0;
	for (const v of x) m = Math.max(m, sign * v * FULL);
	return m;
};

describe('DC offset fault', () => {
	it.each([75, -300, 120])(
		'reads the set %f mV on the left output, with or without signal, and nothing on the right',
		(dcOffsetMv) => {
			const st = state({ faults: { dcOffset: true, dcOffsetMv } });
			for (const gen of [sine(1000, levelForPowerW(1)), { kind: 'off' } as const]) {
				const r = measure(st, gen);
				// Tolerance 2 mV: the healthy output stage's 2nd-order curvature alone makes about 0.1 mV at 1 W.
				expect(Math.abs(r.channels[0].dcVolts * 1000 - dcOffsetMv)).toBeLessThan(2);
				expect(Math.abs(r.channels[1].dcVolts * 1000)).toBeLessThan(2);
			}
			const healthy = measure(state({ faults: { dcOffsetMv } }), sine(1000, levelForPowerW(1)));
			expect(Math.abs(healthy.channels[0].dcVolts * 1000)).toBeLessThan(2);
		}
	);
});

describe('weak output device fault', () => {
	it('at 12 W into 8 Ω the weak channel current-limits: THD+N above 1 %, 30 dB or more over the healthy channel', () => {
		const st = state({ faults: { weakOutputDevice: 'left' } });
		const r = measure(st, sine(1000, levelForPowerW(12)));
		const [weak, healthy] = r.channels;
		// The healthy channel delivers what was asked: P = V²/R = 12 W.
		expect(healthy.powerW).toBeCloseTo(12, 1);
		expect(healthy.thdnPercent).toBeLessThan(0.05);
		expect(weak.thdnPercent).toBeGreaterThan(1);
		expect(weak.thdnDb! - healthy.thdnDb!).toBeGreaterThan(30);
		// The positive half stops at I_max·R = 1.5 A × 8 Ω = 12 V; the negative half swings the full 13.9 V.
		const limitV = WEAK_DEVICE_MAX_CURRENT_A * 8;
		expect(clipVoltsPeak(st, 'left', 'positive')).toBeCloseTo(limitV, 9);
		expect(peakV(r.left, 1)).toBeLessThan(limitV * 1.002);
		expect(peakV(r.left, -1)).toBeGreaterThan(Math.sqrt(2 * 12 * 8) * 0.99);
		// The largest clean sine it can give: P = (I·R)²/(2R) = 9 W.
		expect(maxSinePowerW(st, 'left')).toBeCloseTo((WEAK_DEVICE_MAX_CURRENT_A ** 2 * 8) / 2, 9);
	});

	it('reads healthy below the current limit (7 W into 8 Ω) and the limit follows the load (4 Ω)', () => {
		const low = measure(state({ faults: { weakOutputDevice: 'right' } }), sine(1000, levelForPowerW(7)));
		expect(Math.abs(low.channels[1].thdnDb! - low.channels[0].thdnDb!)).toBeLessThan(1);
		const four = state({ loadOhms: 4, faults: { weakOutputDevice: 'right' } });
		expect(clipVoltsPeak(four, 'right', 'positive')).toBeCloseTo(WEAK_DEVICE_MAX_CURRENT_A * 4, 9);
		const r = measure(four, sine(1000, levelForPowerW(12, 4)), 4);
		expect(r.channels[0].powerW).toBeCloseTo(12, 1); // P = V²/R into 4 Ω
		expect(r.channels[1].thdnPercent).toBeGreaterThan(1);
	});
});

describe('tired filter capacitor fault', () => {
	it.each([50, 60] as const)(
		'raises the ripple hum at 2 × %f Hz by 20·lg(40) = 32 dB at idle, mains hum by 20·lg(3), more under load',
		(mainsHz) => {
			const healthy = measure(state({ mainsHz }), { kind: 'off' });
			const tired = measure(state({ mainsHz, faults: { tiredFilterCap: true } }), { kind: 'off' });
			const at = (x: Float32Array, f: number) => toneLevelAt(x, FS, f, FULL);
			for (const ch of ['left', 'right'] as const) {
				expect(db(at(tired[ch], 2 * mainsHz) / at(healthy[ch], 2 * mainsHz))).toBeCloseTo(
					db(TIRED_CAP_EVEN_FACTOR),
					0
				);
				expect(
					Math.abs(db(at(tired[ch], mainsHz) / at(healthy[ch], mainsHz)) - db(TIRED_CAP_ODD_FACTOR))
				).toBeLessThan(1);
			}
			const loaded = measure(
				state({ mainsHz, faults: { tiredFilterCap: true } }),
				sine(1000, levelForPowerW(12))
			);
			expect(db(at(loaded.left, 2 * mainsHz) / at(tired.left, 2 * mainsHz))).toBeGreaterThan(2);
		}
	);
});

describe('under-bias fault', () => {
	it('shows crossover distortion above 0.05 % THD at 1 W into 8 Ω, where a healthy unit reads under 0.01 %', () => {
		const healthy = measure(state(), sine(1000, levelForPowerW(1)));
		const fault = measure(state({ faults: { underBias: true } }), sine(1000, levelForPowerW(1)));
		expect(healthy.channels[0].thdPercent).toBeLessThan(0.01);
		expect(fault.channels[0].thdPercent).toBeGreaterThan(0.05);
		expect(fault.channels[1].thdPercent).toBeGreaterThan(0.05);
	});
});

describe('noisy selector fault', () => {
	it('raises that channel’s noise by more than 20 dB and leaves the other alone', () => {
		const healthy = measure(state(), sine(1000, levelForPowerW(1)));
		const noisy = measure(state({ faults: { noisySelector: 'left' } }), sine(1000, levelForPowerW(1)));
		expect(noisy.channels[0].noiseDbv - noisy.channels[1].noiseDbv).toBeGreaterThan(20);
		expect(Math.abs(noisy.channels[1].noiseDbv - healthy.channels[1].noiseDbv)).toBeLessThan(1.5);
	});
});

describe('scratchy control fault', () => {
	it('makes the steadiness meter spread by more than 3 dB while moved and under 0.05 dB when left alone', () => {
		const spread = (moving: boolean) => {
			const st = state({ faults: { scratchyControl: { enabled: true, moving, band: 5 } } });
			const { left } = measure(st, sine(1000, 0.2));
			const history = [];
			for (let i = 0; i + 2048 <= left.length; i += 2048) {
				const c = analyzeChannel(left.subarray(i, i + 2048), FS, FULL, { fftSize: 2048 });
				history.push({ levelDbv: c.levelDbv, thdnDb: c.thdnDb });
			}
			return steadiness(history).levelSpreadDb;
		};
		expect(spread(true)).toBeGreaterThan(3);
		expect(spread(false)).toBeLessThan(0.05);
	});
});

describe('protection relay fault', () => {
	const level = (sim: Simulator) => toneLevelAt(render(sim, 16_384).left, FS, 1000, FULL);

	it('opens when a heatsink reaches the trip point (output more than 80 dB down) and closes 10 °C below it', () => {
		const st = state({ faults: { protectionRelay: { enabled: true, tripCelsius: 50 } } });
		const sim = simulator(st, sine(1000, levelForPowerW(12)));
		sim.setHeatsinkCelsius(40, 40);
		const on = level(sim);
		expect(on ** 2 / 8).toBeCloseTo(12, 1); // P = V²/R with the relay closed
		expect(sim.relayOpen).toBeNull();
		sim.setHeatsinkCelsius(40, 50.5);
		const off = level(sim);
		expect(sim.relayOpen).toBe('heat');
		expect(db(on / off)).toBeGreaterThan(80);
		// Still open a little below the trip point, closed again once 10 °C below it.
		sim.setHeatsinkCelsius(45, 45);
		expect(db(on / level(sim))).toBeGreaterThan(80);
		sim.setHeatsinkCelsius(50 - RELAY_RESET_HYSTERESIS_C - 0.5, 30);
		level(sim);
		expect(sim.relayOpen).toBeNull();
		expect(Math.abs(db(level(sim) / on))).toBeLessThan(0.01);
	});

	it('with a timer, opens that many simulated seconds after it is switched on and stays open until switched off', () => {
		// 30 simulated seconds at 60× are 0.5 s of signal.
		const st = state({ faults: { protectionRelay: { enabled: true, tripAfterS: 30 } } });
		const sim = simulator(st, sine(1000, levelForPowerW(4)), 60);
		const on = level(sim); // 0–0.34 s
		expect(sim.relayOpen).toBeNull();
		level(sim); // to 0.68 s
		expect(sim.relayOpen).toBe('timer');
		const off = level(sim);
		expect(db(on / off)).toBeGreaterThan(80);
		// A heatsink that never warmed does not matter; only switching the fault off closes it.
		render(sim, FS);
		expect(sim.relayOpen).toBe('timer');
		sim.setState(applySimPatch(st, { faults: { protectionRelay: { enabled: false } } }));
		level(sim);
		expect(Math.abs(db(level(sim) / on))).toBeLessThan(0.01);
	});

	it('never trips on heat without temperatures, nor on time without a timer', () => {
		const sim = simulator(
			state({ faults: { protectionRelay: { enabled: true, tripCelsius: 30 } } }),
			sine(1000, 0.1),
			1000
		);
		render(sim, 2 * FS);
		expect(sim.relayOpen).toBeNull();
	});
});

describe('overload: the rails and the phono stage bound the output', () => {
	// A waveform bounded by ±Vclip has a fundamental of at most 4·Vclip/π (the square wave; its
	// Fourier series, textbook), so its fundamental power is at most (4/π)² × Vclip²/(2R), and its
	// total power at most Vclip²/R. 1 % slack for harmonics aliased onto the fundamental (the
	// 49th of 1 kHz lands on it at 48 kHz).
	const bound = (st: SimulatorState) => {
		const vClip = st.railVolts - OUTPUT_HEADROOM_V;
		return {
			vClip,
			fundamentalW: ((4 / Math.PI) ** 2 * vClip ** 2) / (2 * st.loadOhms),
			totalW: vClip ** 2 / st.loadOhms
		};
	};

	it.each([
		['phono without the inverse network, 1 V at 1 kHz', { input: 'phono', inverseRiaaNetwork: false }],
		['line, 10 V at 1 kHz', {}],
		['line, 10 V at 1 kHz into 4 Ω with ±30 V rails', { loadOhms: 4, railVolts: 30 }]
	] as const)(
		'%s: peaks stop at the clip voltage and the power stays under the square-wave bound',
		(_n, patch) => {
			const st = state(patch);
			const r = measure(st, sine(1000, 'input' in patch ? 1 : 10));
			const b = bound(st);
			for (const [i, x] of [r.left, r.right].entries()) {
				expect(peakV(x, 1)).toBeLessThan(b.vClip * 1.001);
				expect(peakV(x, -1)).toBeLessThan(b.vClip * 1.001);
				expect(r.channels[i].thdPercent).toBeGreaterThan(10); // hard clipped
				expect(r.channels[i].powerW!).toBeLessThan(b.fundamentalW * 1.01);
				let sq = 0;
				for (const v of x) sq += (v * FULL) ** 2;
				expect(sq / x.length / st.loadOhms).toBeLessThan(b.totalW * 1.001); // + the noise floor
			}
		}
	);

	it('a hot phono input clips the phono stage itself, whatever the volume after it', () => {
		// 1 V at 1 kHz into 40 dB of phono gain asks for 141 V peak of a stage that swings 12 V.
		const volumeDb = -20;
		const st = state({ input: 'phono', inverseRiaaNetwork: false, volumeDb });
		const r = measure(st, sine(1000, 1));
		expect(r.channels[0].thdPercent).toBeGreaterThan(10);
		expect(peakV(r.left, 1)).toBeLessThan(PHONO_STAGE_CLIP_V * 10 ** (volumeDb / 20) * 1.01);
		// 50 mV is inside its overload margin (12 V / 100 = 85 mV rms at 1 kHz): clean, at the set gain.
		const clean = measure(st, sine(1000, 0.05));
		expect(clean.channels[0].thdPercent).toBeLessThan(0.01);
		expect(clean.channels[0].levelVrms).toBeCloseTo(0.05 * 100 * 10 ** (volumeDb / 20), 2);
	});

	it('rails set for a 45 W unit give about 45 W at 1 % THD and never read more than the square-wave bound', () => {
		const st = state({ railVolts: railVoltsForPowerW(45, 8), volumeDb: 30 });
		expect(maxSinePowerW(st)).toBeCloseTo(45, 6); // P = V²/(2R) at the clip voltage
		const thdAt = (vin: number) => {
			const sim = simulator(st, sine(1000, vin));
			return analyzeChannel(render(sim, 4096).left, FS, FULL, { fftSize: 4096, loadOhms: 8 });
		};
		let lo = 0.1;
		let hi = 3;
		for (let i = 0; i < 20; i++) {
			const mid = (lo + hi) / 2;
			if (thdAt(mid).thdPercent! < 1) lo = mid;
			else hi = mid;
		}
		const at1Pct = thdAt(lo).powerW!;
		expect(at1Pct / 45).toBeGreaterThan(0.9);
		expect(at1Pct / 45).toBeLessThan(1.1);
		const r = measure(st, sine(1000, 5));
		expect(r.channels[0].powerW!).toBeLessThan(bound(st).fundamentalW * 1.01);
	});
});
