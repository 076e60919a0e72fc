// Sources named beside the checks are described in tests/REFERENCES.md § 18 (bench procedures).
// The recorded-sweep analysis against sweeps made here: one run through a real second-order
// high-pass filter (time domain, transients and all, phase-continuous steps with no gap), one
// through the RIAA playback network (steady state, steps separated by silence), each within
// ±0.05 dB per step of the filter's analytic response.
import { describe, expect, it } from 'vitest';
import { analyzeSweepRecording } from './sweep-file';
import { sweepFrequencies } from './sweep';
import { findSteps, fitSine } from '$lib/dsp/stepped-sweep';

/** Stepped sine, phase-continuous, `stepS` per step, optional silence between steps. */
function steppedSine(
	fs: number,
	freqs: readonly number[],
	stepS: (i: number) => number,
	gapS: number,
	amp: (f: number) => number,
	phase: (f: number) => number = () => 0
): Float32Array {
	const parts: number[] = [];
	let ph = 0;
	freqs.forEach((f, i) => {
		const n = Math.round(stepS(i) * fs);
		const a = amp(f);
		for (let k = 0; k < n; k++) {
			parts.push(a * Math.sin(ph + phase(f)));
			ph += (2 * Math.PI * f) / fs;
		}
		for (let k = 0; k < Math.round(gapS * fs); k++) parts.push(0);
	});
	return Float32Array.from(parts);
}

describe('second-order high-pass: sweep run through the filter in the time domain', () => {
	const fs = 48_000;
	const fc = 100;
	const q = Math.SQRT1_2;
	// RBJ Audio EQ Cookbook high-pass biquad (bilinear, prewarped at fc).
	const w0 = (2 * Math.PI * fc) / fs;
	const alpha = Math.sin(w0) / (2 * q);
	const cw = Math.cos(w0);
	const a0 = 1 + alpha;
	const b = [(1 + cw) / 2 / a0, -(1 + cw) / a0, (1 + cw) / 2 / a0];
	const a = [(-2 * cw) / a0, (1 - alpha) / a0];
	/** Analytic |H(f)| of H(s) = s² / (s² + s·ω0/Q + ω0²) (the textbook second-order high-pass). */
	const hpMag = (f: number) => {
		const r = f / fc;
		return (r * r) / Math.hypot(1 - r * r, r / q);
	};

	const freqs = sweepFrequencies(3); // 31 third-octave steps, 19.95 Hz … 19.95 kHz, 1 kHz among them
	// Steps of 150 ms (the shortest allowed) and 220 ms alternating, no gap: the frequency just jumps.
	const input = steppedSine(
		fs,
		freqs,
		(i) => (i % 2 ? 0.22 : 0.15),
		0,
		() => 0.5
	);
	const left = new Float32Array(input.length);
	let x1 = 0,
		x2 = 0,
		y1 = 0,
		y2 = 0;
	for (let i = 0; i < input.length; i++) {
		const x0 = input[i];
		const y0 = b[0] * x0 + b[1] * x1 + b[2] * x2 - a[0] * y1 - a[1] * y2;
		left[i] = y0;
		x2 = x1;
		x1 = x0;
		y2 = y1;
		y1 = y0;
	}
	// The right channel is the input itself, 6 dB down: flat.
	const right = input.map((v) => v / 2);

	it('finds all 31 steps at their frequencies and reads the high-pass within ±0.05 dB per step', () => {
		const r = analyzeSweepRecording([left, right], fs);
		expect(r.steps.map((s) => s.frequencyHz)).toHaveLength(31);
		r.steps.forEach((s, i) => {
			expect(Math.abs(s.frequencyHz / freqs[i] - 1)).toBeLessThan(1e-4);
			// Analytic response re 1 kHz (2nd-order high-pass, fc = 100 Hz, Q = 1/√2).
			const expected = 20 * Math.log10(hpMag(freqs[i]) / hpMag(1000));
			expect(Math.abs(s.channels[0].relativeDb - expected), `${freqs[i]} Hz`).toBeLessThan(0.05);
			expect(Math.abs(s.channels[1].relativeDb), `${freqs[i]} Hz flat`).toBeLessThan(0.05);
		});
		// 19.95 Hz: 40 dB/decade below fc → about −28 dB (the filter's own asymptote, plain algebra).
		expect(r.steps[0].channels[0].relativeDb).toBeCloseTo(20 * Math.log10(hpMag(19.95)), 1);
		// Level: 0.25 V peak on the right is 0.1768 V rms = −15.05 dBV (20·lg(0.25/√2)).
		const k = r.steps.findIndex((s) => Math.abs(s.frequencyHz - 1000) < 1);
		expect(r.steps[k].channels[1].levelDbv).toBeCloseTo(-15.05, 2);
		expect(r.steps[k].channels[0].relativeDb).toBe(0);
		// Flatness: ± half the spread of the levels; the flat channel is flat.
		expect(r.channels[1].flatnessDb).toBeLessThan(0.02);
		expect(r.channels[0].flatnessDb).toBeGreaterThan(10);
	});
});

describe('RIAA playback network: steady-state steps separated by 40 ms of silence', () => {
	const fs = 48_000;
	// The network's magnitude from its time constants 3180, 318 and 75 µs (RIAA / IEC 60098), written out here.
	const riaa = (f: number) => {
		const w = 2 * Math.PI * f;
		return Math.hypot(1, w * 318e-6) / (Math.hypot(1, w * 3180e-6) * Math.hypot(1, w * 75e-6));
	};
	const argRiaa = (f: number) => {
		const w = 2 * Math.PI * f;
		return Math.atan(w * 318e-6) - Math.atan(w * 3180e-6) - Math.atan(w * 75e-6);
	};
	// IEC 60098 / RIAA playback table, dB re 1 kHz (published to 0.01 dB).
	const TABLE: [number, number][] = [
		[20, 19.27],
		[50, 16.95],
		[100, 13.09],
		[200, 8.22],
		[500, 2.65],
		[1000, 0],
		[2000, -2.59],
		[5000, -8.21],
		[10_000, -13.73],
		[15_000, -17.16],
		[20_000, -19.62]
	];
	const freqs = TABLE.map(([f]) => f);
	const out = steppedSine(
		fs,
		freqs,
		() => 0.16,
		0.04,
		(f) => (0.05 * riaa(f)) / riaa(1000),
		argRiaa
	);

	it('reads the playback curve at the table frequencies within ±0.05 dB, and its deviation as ≈ 0', () => {
		const r = analyzeSweepRecording([out, out], fs, { riaa: true });
		expect(r.steps).toHaveLength(TABLE.length);
		r.steps.forEach((s, i) => {
			const [f, tableDb] = TABLE[i];
			expect(Math.abs(s.frequencyHz / f - 1)).toBeLessThan(1e-4);
			// IEC 60098 table value (rounded to 0.01 dB): within ±0.05 dB.
			expect(Math.abs(s.channels[0].relativeDb - tableDb), `${f} Hz`).toBeLessThan(0.05);
			expect(Math.abs(s.channels[0].riaaDeviationDb!), `${f} Hz deviation`).toBeLessThan(0.05);
		});
		expect(r.channels[0].flatnessDb).toBeLessThan(0.05);
	});

	it('without --riaa there is no deviation field, and a file with no steps says what a sweep needs', () => {
		const r = analyzeSweepRecording([out], fs);
		expect(r.steps[0].channels[0]).not.toHaveProperty('riaaDeviationDb');
		expect(() => analyzeSweepRecording([new Float32Array(fs)], fs)).toThrow(/at least 150 ms/);
	});
});

describe('a dense, noisy sweep near Nyquist', () => {
	it('12 per octave at 44.1 kHz with −57 dB of noise and 30 ms noisy gaps: all 121 steps, flat within ±0.05 dB', () => {
		const fs = 44_100;
		const freqs = sweepFrequencies(12);
		let seed = 1;
		// A fixed linear congruential sequence (Numerical Recipes constants), so the test never flickers.
		const noise = () => {
			seed = (1664525 * seed + 1013904223) >>> 0;
			return 1e-3 * (seed / 2 ** 32 - 0.5);
		};
		const clean = steppedSine(
			fs,
			freqs,
			() => 0.15,
			0.03,
			() => 0.5
		);
		const x = clean.map((v) => v + noise());
		const r = analyzeSweepRecording([x], fs);
		expect(r.steps).toHaveLength(121);
		r.steps.forEach((s, i) => {
			expect(Math.abs(s.frequencyHz / freqs[i] - 1)).toBeLessThan(1e-4);
			expect(Math.abs(s.channels[0].relativeDb), `${freqs[i]} Hz`).toBeLessThan(0.05);
		});
	});
});

describe('sine fit', () => {
	it('the four-parameter fit recovers amplitude and frequency from three cycles (IEEE 1057)', () => {
		const fs = 48_000;
		const x = Float32Array.from(
			{ length: 7200 },
			(_, i) => 0.3 * Math.sin((2 * Math.PI * 20.02 * i) / fs + 1) + 0.01
		);
		const f = fitSine(x, 0, x.length, (2 * Math.PI * 20.3) / fs, true);
		expect((f.omega * fs) / (2 * Math.PI)).toBeCloseTo(20.02, 4);
		expect(f.amplitude).toBeCloseTo(0.3, 5);
		expect(f.dc).toBeCloseTo(0.01, 5);
		expect(findSteps([x], fs)).toHaveLength(1);
	});
});
