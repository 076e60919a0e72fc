// IMD known answers: signals built with chosen sidebands, and a square-law nonlinearity with an analytic answer.
import { describe, expect, it } from 'vitest';
import { smpteImd, twinToneImd } from './imd';

const FS = 48000;
const N = 65536;

function build(fn: (t: number) => number): Float32Array {
	const x = new Float32Array(N);
	for (let i = 0; i < N; i++) x[i] = fn(i / FS);
	return x;
}
const s = (f: number, t: number, ph = 0) => Math.sin(2 * Math.PI * f * t + ph);

describe('SMPTE IMD (60 Hz + 7 kHz, 4:1)', () => {
	it('adds sidebands linearly within an order and combines orders as rss, relative to the HF tone', () => {
		// REFERENCES §7 example [computed]: sidebands 0.0025 each on a 0.25 carrier → 2.00 % (linear sum).
		const x = build(
			(t) =>
				s(60, t) +
				0.25 * s(7000, t) +
				0.0025 * (s(6940, t, 0.3) + s(7060, t, 1.2)) +
				0.001 * (s(6880, t, 2) + s(7120, t, 0.5))
		);
		const r = smpteImd(x, FS);
		expect(r.f1Hz).toBeCloseTo(60, 6);
		expect(r.f2Hz).toBeCloseTo(7000, 6);
		expect(r.d2Percent).toBeCloseTo(2.0, 3);
		expect(r.d3Percent).toBeCloseTo(0.8, 3);
		expect(r.imdPercent).toBeCloseTo(Math.hypot(2, 0.8), 3);
		expect(r.level1Vrms / r.level2Vrms).toBeCloseTo(4, 6);
	});

	it('square-law distortion y = x + k·x² gives d2 = 2·k·A1 exactly', () => {
		// (A1 cos ω1t + A2 cos ω2t)² holds A1·A2·[cos(ω2−ω1)t + cos(ω2+ω1)t]: each sideband k·A1·A2 on A2.
		const k = 0.01;
		const a1 = 0.4;
		const x = build((t) => {
			const v = a1 * s(60, t) + 0.1 * s(7000, t);
			return v + k * v * v;
		});
		const r = smpteImd(x, FS);
		expect(r.d2Percent).toBeCloseTo(2 * k * a1 * 100, 4);
		expect(r.d3Percent).toBeLessThan(1e-5);
	});

	it('refuses an FFT too short to resolve 60 Hz sidebands', () => {
		expect(() => smpteImd(new Float32Array(4096), FS)).toThrow(/at least/);
	});
});

describe('twin-tone IMD (19 + 20 kHz, 1:1)', () => {
	it('difference tone and 3rd-order products relative to the sum of the tone amplitudes', () => {
		// Benchlight convention (REFERENCES §7): d2 = U(f2−f1)/(U1+U2), d3 = (U(2f1−f2)+U(2f2−f1))/(U1+U2)
		const x = build(
			(t) =>
				0.3 * s(19000, t) +
				0.3 * s(20000, t, 1) +
				0.006 * s(1000, t) +
				0.0015 * (s(18000, t) + s(21000, t, 2))
		);
		const r = twinToneImd(x, FS);
		expect(r.d2Percent).toBeCloseTo(1.0, 3);
		expect(r.d3Percent).toBeCloseTo(0.5, 3);
		expect(r.imdPercent).toBeCloseTo(Math.hypot(1, 0.5), 3);
		expect(r.imdDb).toBeCloseTo(20 * Math.log10(Math.hypot(0.01, 0.005)), 3);
		expect(r.products.map((p) => Math.round(p.frequencyHz))).toEqual([1000, 18000, 21000]);
	});
});
