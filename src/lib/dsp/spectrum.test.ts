// Log-spaced thumbnail spectra keep the peaks of the full spectrum.
import { describe, expect, it } from 'vitest';
import { compactSpectrum } from './spectrum';

describe('compactSpectrum', () => {
	it('reduces to at most `points` log-spaced points and keeps every tone peak', () => {
		const fs = 48000;
		const n = 65536;
		const bins = n / 2 + 1;
		const spec = new Float32Array(bins).fill(-140);
		const binHz = fs / n;
		const tones = [
			[1000, -3],
			[2000, -80],
			[15000, -110],
			[50, -60]
		];
		for (const [f, l] of tones) spec[Math.round(f / binHz)] = l;
		const c = compactSpectrum(spec, fs, n, 500);
		expect(c.frequencyHz.length).toBeLessThanOrEqual(500);
		expect(c.frequencyHz.length).toBe(c.levelDbv.length);
		for (let i = 1; i < c.frequencyHz.length; i++)
			expect(c.frequencyHz[i]).toBeGreaterThan(c.frequencyHz[i - 1]);
		expect(c.frequencyHz[0]).toBeGreaterThanOrEqual(10 - binHz);
		expect(c.frequencyHz.at(-1)).toBeLessThanOrEqual(fs / 2);
		for (const [f, l] of tones) {
			const i = c.levelDbv.indexOf(l);
			expect(i, `${f} Hz`).toBeGreaterThanOrEqual(0);
			expect(Math.abs(c.frequencyHz[i] - f)).toBeLessThan(binHz);
		}
		// Spacing is logarithmic: roughly as many points in 100–1000 Hz as in 1–10 kHz.
		const count = (a: number, b: number) => c.frequencyHz.filter((f) => f >= a && f < b).length;
		expect(Math.abs(count(100, 1000) - count(1000, 10000))).toBeLessThan(0.1 * count(1000, 10000));
	});
});
