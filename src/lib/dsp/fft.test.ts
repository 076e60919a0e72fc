// fft.js (used by the analyser) against an independent FFT from npm (mathjs) on random input.
import FFT from 'fft.js';
import { fft as mathFft } from 'mathjs';
import { describe, expect, it } from 'vitest';

function lcg(seed: number): () => number {
	let s = seed >>> 0;
	return () => {
		s = (s * 1664525 + 1013904223) >>> 0;
		return s / 2 ** 32 - 0.5;
	};
}

describe('fft.js against mathjs', () => {
	it('known vector [1,2,3,4,0,0,0,0]', () => {
		const f = new FFT(8);
		const out = f.createComplexArray() as number[];
		f.realTransform(out, [1, 2, 3, 4, 0, 0, 0, 0]);
		f.completeSpectrum(out);
		// REFERENCES §12 [computed with numpy.fft.fft]: X0 = 10, X1 = −0.414214 − 7.242641j, X2 = −2 + 2j
		expect(out[0]).toBeCloseTo(10, 6);
		expect(out[2]).toBeCloseTo(-0.414214, 6);
		expect(out[3]).toBeCloseTo(-7.242641, 6);
		expect(out[4]).toBeCloseTo(-2, 6);
		expect(out[5]).toBeCloseTo(2, 6);
	});

	for (const n of [256, 4096, 16384]) {
		it(`random real input, N = ${n}`, () => {
			const rnd = lcg(n);
			const x = Array.from({ length: n }, rnd);
			const f = new FFT(n);
			const out = new Float64Array(2 * n);
			f.realTransform(out, Float64Array.from(x));
			f.completeSpectrum(out);
			const ref = mathFft(x) as unknown as { re: number; im: number }[];
			let maxErr = 0;
			let maxMag = 0;
			for (let k = 0; k < n; k++) {
				const re = typeof ref[k] === 'number' ? (ref[k] as unknown as number) : ref[k].re;
				const im = typeof ref[k] === 'number' ? 0 : ref[k].im;
				maxErr = Math.max(maxErr, Math.hypot(out[2 * k] - re, out[2 * k + 1] - im));
				maxMag = Math.max(maxMag, Math.hypot(re, im));
			}
			// Two double-precision FFTs agree to rounding: relative to the largest bin, far below 1e-12.
			expect(maxErr / maxMag).toBeLessThan(1e-12);
			expect(maxMag).toBeGreaterThan(1);
		});
	}
});
