// Window figures computed from the generated windows, against Harris 1978 and Heinzel et al. 2002.
import { describe, expect, it } from 'vitest';
import { makeWindow, WindowKernel, windows, type WindowName } from './windows';

const N = 4096;

/** |value − printed| within the printed rounding (half a unit in the last printed decimal). */
function expectRounded(value: number, printed: number, decimals: number): void {
	expect(Math.abs(value - printed)).toBeLessThanOrEqual(0.5 * 10 ** -decimals + 1e-12);
}

function figures(name: WindowName) {
	const w = makeWindow(name, N);
	let s1 = 0;
	let s2 = 0;
	let max = 0;
	for (const v of w) {
		s1 += v;
		s2 += v * v;
		max = Math.max(max, v);
	}
	const k = new WindowKernel(name, N);
	const o = new Float64Array(2);
	const mag = (u: number) => {
		k.eval(u, o, 0);
		return Math.hypot(o[0], o[1]);
	};
	const peak = mag(0);
	let side = 0;
	for (let u = windows[name].mainlobeHalfWidthBins; u < 80; u += 0.002) side = Math.max(side, mag(u));
	// Heinzel's W3dB is the width at −3.00 dB (not at half power, −3.01 dB): bisect for it.
	let lo = 0;
	let hi = windows[name].mainlobeHalfWidthBins;
	for (let i = 0; i < 60; i++) {
		const mid = (lo + hi) / 2;
		if (20 * Math.log10(mag(mid) / peak) > -3) lo = mid;
		else hi = mid;
	}
	const u3 = lo;
	return {
		coherentGain: s1 / (N * max),
		enbwBins: (N * s2) / (s1 * s1),
		scallopDb: -20 * Math.log10(mag(0.5) / peak),
		sidelobeDb: 20 * Math.log10(side / peak),
		bw3dbBins: 2 * u3,
		kernelPeakOverSum: peak / s1
	};
}

describe('window figures', () => {
	it('Hann', () => {
		const f = figures('hann');
		expect(f.coherentGain).toBeCloseTo(0.5, 3); // Harris 1978 Table 1: CG 0.50
		expect(f.enbwBins).toBeCloseTo(1.5, 3); // Harris 1978 Table 1: ENBW 1.50 bins
		expectRounded(f.scallopDb, 1.42, 2); // Harris 1978 Table 1: scalloping loss 1.42 dB
		expectRounded(f.sidelobeDb, -31.5, 1); // Heinzel et al. 2002 (Hann): PSLL 31.5 dB
		expectRounded(f.bw3dbBins, 1.4382, 4); // Heinzel et al. 2002 (Hann): W3dB 1.4382 bins
	});

	it('Blackman-Harris 4-term (−92 dB)', () => {
		const f = figures('blackman-harris-4');
		expectRounded(f.coherentGain, 0.3588, 4); // Harris 1978 Table 1 / REFERENCES §3: CG 0.3588
		expectRounded(f.enbwBins, 2.0044, 4); // Heinzel et al. 2002 (BH92): NENBW 2.0044 bins
		expectRounded(f.scallopDb, 0.8256, 4); // Heinzel et al. 2002 (BH92): flatness −0.8256 dB
		expectRounded(f.sidelobeDb, -92.0, 1); // Harris 1978 Table 1: highest side lobe −92 dB
		expectRounded(f.bw3dbBins, 1.8962, 4); // Heinzel et al. 2002 (BH92): W3dB 1.8962 bins
	});

	it('HFT95 flat-top', () => {
		const f = figures('flat-top');
		expectRounded(f.coherentGain, 0.2136, 4); // Heinzel et al. 2002 HFT95 (REFERENCES §3): CG 0.2136
		expectRounded(f.enbwBins, 3.8112, 4); // Heinzel et al. 2002 HFT95: NENBW 3.8112 bins
		expect(f.scallopDb).toBeLessThan(0.0044 + 5e-5); // Heinzel et al. 2002 HFT95: max flatness error 0.0044 dB
		expectRounded(f.sidelobeDb, -95.0, 1); // Heinzel et al. 2002 HFT95: PSLL 95.0 dB
		expectRounded(f.bw3dbBins, 3.759, 3); // Heinzel et al. 2002 HFT95: W3dB 3.7590 bins (we get 3.7588–3.7592 with N; checked to 3 decimals)
	});

	it('7-term Blackman-Harris reaches the −180 dB side lobes it is chosen for', () => {
		const f = figures('blackman-harris-7');
		expect(f.sidelobeDb).toBeLessThan(-179.5); // Albrecht 2001, 7-term cosine sum: side lobes −180 dB (from memory)
		expectRounded(f.enbwBins, 2.63, 2); // Albrecht 2001: ENBW 2.63 bins (from memory)
	});

	it('the exported figures agree with the generated windows', () => {
		for (const name of Object.keys(windows) as WindowName[]) {
			const f = figures(name);
			expect(windows[name].coherentGain).toBeCloseTo(f.coherentGain, 9);
			expect(windows[name].enbwBins).toBeCloseTo(f.enbwBins, 9);
			expect(Math.abs(windows[name].scallopLossDb - f.scallopDb)).toBeLessThan(0.006);
			expect(Math.abs(windows[name].highestSidelobeDb - f.sidelobeDb)).toBeLessThan(0.06);
			// The closed-form kernel at 0 equals Σw: it is the window's own DFT at DC.
			expect(f.kernelPeakOverSum).toBeCloseTo(1, 12);
		}
	});

	it('the closed-form kernel matches a direct DFT of the windowed tone at fractional offsets', () => {
		const n = 512;
		const w = makeWindow('blackman-harris-7', n);
		const k = new WindowKernel('blackman-harris-7', n);
		const o = new Float64Array(2);
		for (const nu of [0, 0.25, 3.7, 10.5, 100.123, 255.9]) {
			for (const bin of [0, 3, 4, 11, 100, 256]) {
				let re = 0;
				let im = 0;
				for (let i = 0; i < n; i++) {
					const ph = (2 * Math.PI * (nu - bin) * i) / n;
					re += w[i] * Math.cos(ph);
					im += w[i] * Math.sin(ph);
				}
				k.eval(bin - nu, o, 0);
				expect(Math.abs(o[0] - re)).toBeLessThan(1e-9 * n);
				expect(Math.abs(o[1] - im)).toBeLessThan(1e-9 * n);
			}
		}
	});
});
