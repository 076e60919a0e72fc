// Known-answer tests of the analyser: signals built here from chosen tones and noise, compared with the
// analytic truth of their construction (not with numbers from an earlier run).
import { describe, expect, it } from 'vitest';
import {
	Analyzer,
	analyzeChannel,
	analyzeFrames,
	crosstalkDb,
	defaultFftSize,
	toneLevelAt
} from './analyzer';
import { aWeightingPowerGain } from './weighting';
import { dbuToVrms } from './units';

interface Tone {
	f: number;
	a: number; // peak, full-scale units
	ph?: number;
}

/** mulberry32: a small seeded PRNG so noise is reproducible. */
function rng(seed: number): () => number {
	let s = seed >>> 0;
	return () => {
		s = (s + 0x6d2b79f5) >>> 0;
		let t = s;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

function gaussian(seed: number): () => number {
	const u = rng(seed);
	return () => Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
}

/** Tones plus Gaussian noise, computed in double precision; `quantumFs` rounds to that step before storing. */
function synth(
	fs: number,
	n: number,
	tones: Tone[],
	noiseSigma = 0,
	seed = 1,
	dc = 0,
	quantumFs = 0
): Float32Array {
	const x = new Float32Array(n);
	const g = gaussian(seed);
	for (let i = 0; i < n; i++) {
		let v = dc;
		for (const t of tones) v += t.a * Math.sin(2 * Math.PI * t.f * (i / fs) + (t.ph ?? 0));
		if (noiseSigma) v += noiseSigma * g();
		x[i] = quantumFs ? Math.round(v / quantumFs) * quantumFs : v;
	}
	return x;
}

const db = (r: number) => 20 * Math.log10(r);
const FS = 48000;
const N = 65536;

describe('level and frequency', () => {
	it('non-bin-centred tones read their level and frequency (targets ±0.05 dB, ±0.05 Hz)', () => {
		for (const [f, a, fsv] of [
			[997, 0.5, 1],
			[1234.567, 0.1, 10],
			[19997.3, 0.9, 2.5],
			[31.7, 0.25, 1],
			[6001.25, 0.001, 20]
		]) {
			const r = analyzeChannel(synth(FS, N, [{ f, a, ph: 0.7 }]), FS, fsv);
			const vrms = (a * fsv) / Math.SQRT2; // sine rms = peak/√2 (definition)
			expect(Math.abs(r.frequencyHz! - f)).toBeLessThan(1e-4);
			expect(Math.abs(r.levelDbv - db(vrms))).toBeLessThan(1e-3); // 0 dBV = 1 V rms
			expect(r.levelVrms).toBeCloseTo(vrms, 6);
			expect(r.levelDbu).toBeCloseTo(db(vrms / dbuToVrms(0)), 6); // 0 dBu = √0.6 V (REFERENCES §5)
			expect(r.levelDbfs).toBeCloseTo(db(a), 3); // AES17: 0 dBFS = sine peaking at full scale
		}
	});

	it('power into the load is V²/R and gain refers to the stated input', () => {
		// 20 V rms into 8 Ω = 50 W (REFERENCES §5: P = V²/R)
		const r = analyzeChannel(synth(FS, N, [{ f: 1000.4, a: 0.5 }]), FS, 40 * Math.SQRT2, {
			loadOhms: 8,
			referenceVrms: 1
		});
		expect(r.levelVrms).toBeCloseTo(20, 4);
		expect(r.powerW).toBeCloseTo(50, 2);
		expect(r.gainDb).toBeCloseTo(db(20), 3);
	});

	it('tones a few bins above DC, with a DC offset, in short FFTs (joint tone + DC fit)', () => {
		for (const [n, f] of [
			[256, 1000], // 5.3 bins
			[1024, 100], // 2.1 bins
			[8192, 5] // 0.85 bin, with the band opened to 1 Hz
		]) {
			const r = analyzeChannel(synth(FS, n, [{ f, a: 0.5, ph: 0.4 }], 0, 1, 0.01), FS, 1, {
				bandHz: [1, 24000]
			});
			expect(Math.abs(r.frequencyHz! - f), `${f} Hz in ${n}`).toBeLessThan(1e-4);
			expect(Math.abs(r.levelDbv - db(0.5 / Math.SQRT2))).toBeLessThan(1e-4);
			expect(r.dcVolts).toBeCloseTo(0.01, 6);
			expect(r.thdnDb).toBeLessThan(-130);
		}
	});

	it('harmonics of a fundamental only a few bins up overlap each other: fitted jointly', () => {
		for (const [n, f] of [
			[1024, 100.3], // 2.1 bins: H2…H10 all within one another's main lobes
			[4096, 150.7] // 12.9 bins: neighbouring supports overlap
		]) {
			const tones: Tone[] = [
				{ f, a: 0.5, ph: 0.4 },
				{ f: 2 * f, a: 0.005, ph: 1 }, // −40 dBc
				{ f: 3 * f, a: 0.0015811, ph: 2 }, // −50 dBc
				{ f: 5 * f, a: 0.0005, ph: 3 } // −60 dBc
			];
			const r = analyzeChannel(synth(FS, n, tones, 0, 1, 0.02), FS, 1, { bandHz: [1, 24000] });
			const thd = Math.hypot(0.01, 0.0031622, 0.001);
			expect(Math.abs(r.frequencyHz! - f), `${f} Hz in ${n}`).toBeLessThan(1e-4);
			expect(Math.abs(r.levelDbv - db(0.5 / Math.SQRT2))).toBeLessThan(1e-4);
			expect(Math.abs(r.thdDb! - db(thd))).toBeLessThan(0.01);
			expect(Math.abs(r.thdnDb! - db(thd / Math.sqrt(1 + thd * thd)))).toBeLessThan(0.01);
			expect(Math.abs((r.harmonics.find((h) => h.order === 3)?.levelDbc ?? 0) + 50)).toBeLessThan(0.01);
			expect(r.harmonics.find((h) => h.order === 4)?.levelDbc).toBeLessThan(-120);
			expect(r.dcVolts).toBeCloseTo(0.02, 6);
		}
	});

	it('a DC offset far larger than the tone does not hide it', () => {
		const r = analyzeChannel(synth(FS, 4096, [{ f: 1000, a: 0.01 }], 0, 1, 0.5), FS, 1);
		expect(Math.abs(r.frequencyHz! - 1000)).toBeLessThan(1e-4);
		expect(Math.abs(r.levelDbv - db(0.01 / Math.SQRT2))).toBeLessThan(1e-3);
		expect(r.dcVolts).toBeCloseTo(0.5, 6);
	});

	it('a low fundamental with a DC offset is still measured (near-DC fit)', () => {
		const r = analyzeChannel(synth(FS, N, [{ f: 20.3, a: 0.3 }], 0, 1, 0.05), FS, 4);
		expect(Math.abs(r.frequencyHz! - 20.3)).toBeLessThan(1e-4);
		expect(Math.abs(r.levelDbv - db((0.3 * 4) / Math.SQRT2))).toBeLessThan(1e-3);
		expect(r.dcVolts).toBeCloseTo(0.2, 5);
	});
});

describe('distortion and noise', () => {
	it('pure 32-bit float sines read THD+N at or below −130 dB (issue 3 requirement)', () => {
		for (const [f, a] of [
			[997, 0.891],
			[1000, 0.5],
			[1234.567, 0.1],
			[15000.1, 0.7],
			[50, 0.5]
		]) {
			const r = analyzeChannel(synth(FS, N, [{ f, a, ph: 1.1 }]), FS, 1);
			expect(r.thdnDb, `${f} Hz`).toBeLessThanOrEqual(-130);
			expect(r.thdDb).toBeLessThanOrEqual(-130);
		}
	});

	it('sum of sines with chosen harmonic levels plus white noise (THD and THD+N ±0.5 dB target)', () => {
		const f0 = 1001.7;
		const hDbc: [number, number][] = [
			[2, -50],
			[3, -60],
			[5, -70],
			[7, -75]
		];
		const sigma = 1e-4;
		const tones: Tone[] = [
			{ f: f0, a: 1, ph: 0.2 },
			...hDbc.map(([h, l]) => ({ f: h * f0, a: 10 ** (l / 20), ph: h }))
		];
		const r = analyzeChannel(synth(FS, N, tones, sigma, 7), FS, 1);
		// THD = √(ΣVn²)/V1 (IEC 60050 / REFERENCES §6)
		const hPow = hDbc.reduce((s, [, l]) => s + 10 ** (l / 10), 0);
		expect(Math.abs(r.thdDb! - 10 * Math.log10(hPow))).toBeLessThan(0.02);
		// Each harmonic is fitted over its 2.6-bin noise bandwidth: at σ = 1e-4 the −75 dBc one sits only ~45 dB above
		// that noise, so its level may move by a few hundredths of a dB.
		for (const [h, l] of hDbc)
			expect(Math.abs((r.harmonics.find((x) => x.order === h)?.levelDbc ?? 0) - l)).toBeLessThan(0.1);
		// White noise of variance σ² spreads evenly to Nyquist: the 20 Hz–20 kHz share is σ²·(19980/24000).
		const noisePow = sigma * sigma * (19980 / 24000);
		const p1 = 0.5;
		const thdnTruth = Math.sqrt((hPow * p1 + noisePow) / (p1 + hPow * p1 + noisePow)); // relative to total in-band rms (REFERENCES §6, Benchlight convention)
		expect(Math.abs(r.thdnDb! - db(thdnTruth))).toBeLessThan(0.1);
		expect(Math.abs(r.thdnPercent! - thdnTruth * 100)).toBeLessThan(thdnTruth * 100 * 0.012);
		expect(Math.abs(db(r.noiseVrms) - 10 * Math.log10(noisePow))).toBeLessThan(0.15);
		expect(Math.abs(r.snrDb! - 10 * Math.log10(p1 / noisePow))).toBeLessThan(0.15); // SNR excludes harmonics (REFERENCES §6)
		expect(Math.abs(r.sinadDb! - 10 * Math.log10(p1 / (hPow * p1 + noisePow)))).toBeLessThan(0.1); // SINAD (REFERENCES §6)
		expect(r.enob).toBeCloseTo((r.sinadDb! - 1.76) / 6.02, 10); // ENOB = (SINAD − 1.76)/6.02 (IEEE 1241)
	});

	it('band-limited noise of known rms: multitone noise inside and outside the band', () => {
		const f0 = 997;
		const u = rng(3);
		const noise: Tone[] = [];
		let inBand = 0;
		let inBandA = 0;
		let inNarrow = 0;
		// 300 components from 25 Hz to 23 kHz, kept ≥ 30 Hz from the fundamental's harmonics and ≥ 15 Hz
		// (20 bins) from each other: closer pairs beat within one frame, so the frame rms would not be Σa²/2.
		while (noise.length < 300) {
			const f = 25 + u() * 23000;
			const nearHarmonic = Math.abs(f / f0 - Math.round(f / f0)) * f0 < 30;
			if (nearHarmonic || noise.some((t) => Math.abs(t.f - f) < 15)) continue;
			const a = 2e-4 * (0.5 + u());
			noise.push({ f, a, ph: u() * 6.283 });
			if (f <= 20000) {
				inBand += (a * a) / 2;
				inBandA += ((a * a) / 2) * aWeightingPowerGain(f); // IEC 61672-1 A-weighting, checked in weighting.test.ts
			}
			if (f >= 100 && f <= 5000) inNarrow += (a * a) / 2;
		}
		const x = synth(FS, N, [{ f: f0, a: 0.5 }, ...noise]);
		const r = analyzeChannel(x, FS, 1);
		expect(Math.abs(db(r.noiseVrms) - 10 * Math.log10(inBand))).toBeLessThan(0.05);
		expect(Math.abs(db(r.noiseWeightedVrms) - 10 * Math.log10(inBandA))).toBeLessThan(0.05);
		expect(Math.abs(r.snrWeightedDb! - 10 * Math.log10(0.125 / inBandA))).toBeLessThan(0.05);
		const narrow = analyzeChannel(x, FS, 1, { bandHz: [100, 5000] });
		expect(Math.abs(db(narrow.noiseVrms) - 10 * Math.log10(inNarrow))).toBeLessThan(0.1);
		expect(narrow.harmonics.map((h) => h.order)).toEqual([2, 3, 4, 5]);
	});

	it('hum tones count as noise, not distortion', () => {
		const hum: Tone[] = [
			{ f: 50, a: 1e-3 },
			{ f: 100, a: 5e-4 },
			{ f: 150, a: 3e-4 }
		];
		const r = analyzeChannel(synth(FS, N, [{ f: 1000.3, a: 0.5 }, ...hum]), FS, 1);
		const humPow = hum.reduce((s, t) => s + (t.a * t.a) / 2, 0);
		expect(Math.abs(db(r.noiseVrms) - 10 * Math.log10(humPow))).toBeLessThan(0.01);
		expect(r.thdDb).toBeLessThan(-120);
		expect(Math.abs(r.thdnDb! - 10 * Math.log10(humPow / (0.125 + humPow)))).toBeLessThan(0.01);
		// A-weighted hum: each line scaled by the IEC 61672-1 response at its frequency.
		const humA = hum.reduce((s, t) => s + ((t.a * t.a) / 2) * aWeightingPowerGain(t.f), 0);
		expect(Math.abs(db(r.noiseWeightedVrms) - 10 * Math.log10(humA))).toBeLessThan(0.01);
	});

	it('harmonics outside the band are neither THD nor THD+N; a wider band takes them in', () => {
		const fs = 192000;
		const f0 = 6000.7;
		const levels = [0, 0, 1e-3, 1e-3, 1e-2, 1e-2]; // index = order: H2, H3 at −60 dBc; H4, H5 at −40 dBc
		const tones: Tone[] = [{ f: f0, a: 1 }, ...[2, 3, 4, 5].map((h) => ({ f: h * f0, a: levels[h], ph: h }))];
		const x = synth(fs, N, tones);
		const audio = analyzeChannel(x, fs, 1); // default band 20 Hz–20 kHz
		expect(audio.harmonics.map((h) => h.order)).toEqual([2, 3]);
		expect(Math.abs(audio.thdDb! - db(Math.SQRT2 * 1e-3))).toBeLessThan(0.01);
		expect(Math.abs(audio.thdnDb! - db((Math.SQRT2 * 1e-3) / Math.sqrt(1 + 2e-6)))).toBeLessThan(0.01);
		const wide = analyzeChannel(x, fs, 1, { bandHz: [10, 80000] });
		expect(wide.harmonics.map((h) => h.order)).toEqual(
			[2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13].filter((h) => h * f0 <= 80000 && h <= 10)
		);
		const thdWide = Math.sqrt(2e-6 + 2e-4);
		expect(Math.abs(wide.thdDb! - db(thdWide))).toBeLessThan(0.01);
		expect(Math.abs(wide.thdnDb! - db(thdWide / Math.sqrt(1 + thdWide * thdWide)))).toBeLessThan(0.01);
	});

	it('A-weighted THD+N scales a residual tone by the weighting at its frequency', () => {
		const r = analyzeChannel(
			synth(FS, N, [
				{ f: 1000, a: 1 },
				{ f: 100, a: 0.01 }
			]),
			FS,
			1,
			{ weighting: 'a' }
		);
		// Residual A-weighted over total A-weighted; A(1 kHz) = 0 dB (IEC 61672-1).
		const res = 0.5e-4 * aWeightingPowerGain(100);
		const tot = 0.5 * aWeightingPowerGain(1000) + res;
		expect(Math.abs(r.thdnDb! - 10 * Math.log10(res / tot))).toBeLessThan(0.01);
		expect(r.thdnDb).toBeCloseTo(-40 - 19.1, 0); // IEC 61672-1 table: A(100 Hz) = −19.1 dB
	});

	for (const bits of [16, 24]) {
		it(`${bits}-bit quantisation of a full-scale sine reads SINAD ≈ 6.02N + 1.76 dB (IEEE 1241)`, () => {
			const q = 2 ** -(bits - 1);
			const a = 1 - q;
			// Quantised from the double-precision sine (a 24-bit grid is exact in float32).
			const x = synth(FS, N, [{ f: 997.13, a, ph: 0.3 }], 0, 1, 0, q);
			// Full Nyquist band, as the 6.02N + 1.76 dB figure assumes; 1 Hz lower edge leaves out only DC.
			const r = analyzeChannel(x, FS, 1, { bandHz: [1, FS / 2] });
			// Uniform quantisation noise q²/12 against a sine of power a²/2 (REFERENCES §5: 20·lg 2^N + 10·lg 1.5 at full scale)
			const truth = 10 * Math.log10((a * a) / 2 / ((q * q) / 12)) + 10 * Math.log10(24000 / (24000 - 1));
			expect(Math.abs(r.sinadDb! - truth)).toBeLessThan(0.3);
			expect(Math.abs(r.enob! - bits)).toBeLessThan(0.06);
		});
	}
});

describe('averaging, channels and the reusable analyser', () => {
	it('power-averages consecutive frames and states it in the conditions', () => {
		const sigma = 1e-3;
		const x = synth(FS, 4 * 16384, [{ f: 1000.5, a: 0.5 }], sigma, 11);
		const res = analyzeFrames([x], FS, 1, { fftSize: 16384, averages: 4 });
		expect(res.conditions.averages).toBe(4);
		expect(res.conditions.fftSize).toBe(16384);
		const noisePow = sigma * sigma * (19980 / 24000);
		expect(Math.abs(db(res.channels[0].noiseVrms) - 10 * Math.log10(noisePow))).toBeLessThan(0.15);
	});

	it('balance and crosstalk', () => {
		const left = synth(FS, N, [{ f: 1000.2, a: 0.8 }], 1e-6, 1);
		const right = synth(FS, N, [{ f: 1000.2, a: 0.8e-4, ph: 1 }], 1e-6, 2); // −80 dB leak of the same tone
		const res = analyzeFrames([left, right], FS, [2, 2]);
		expect(res.balanceDb).toBeCloseTo(80, 2);
		expect(res.crosstalkFromChannel).toBe(0);
		expect(res.crosstalkToChannel).toBe(1);
		expect(res.crosstalkDb).toBeCloseTo(-80, 2);
		expect(crosstalkDb(left, right, FS, 2)).toBeCloseTo(-80, 2);
		expect(Math.abs(db(toneLevelAt(right, FS, 1000.2, 2) / ((0.8e-4 * 2) / Math.SQRT2)))).toBeLessThan(0.01);
		// Both channels driven, 0.5 dB apart: balance only.
		const r2 = synth(FS, N, [{ f: 1000.2, a: 0.8 * 10 ** (-0.5 / 20) }]);
		const both = analyzeFrames([left, r2], FS, 2);
		expect(both.balanceDb).toBeCloseTo(0.5, 3);
		expect(both.crosstalkDb).toBeUndefined();
	});

	it('Analyzer: latest fftSize samples, amplitude-correct flat-top spectrum, reused buffers', () => {
		const n = 16384;
		const an = new Analyzer(n, FS, { window: 'flat-top' });
		const f = 1234.56; // not bin-centred
		const x = synth(FS, n + 5000, [{ f: 300, a: 0.9 }]);
		x.set(synth(FS, n, [{ f, a: 0.5 }]), 5000);
		const r = an.analyze(x, 2);
		expect(Math.abs(r.frequencyHz! - f)).toBeLessThan(1e-3);
		const spec = an.spectrumDbv;
		expect(spec.length).toBe(n / 2 + 1);
		const peak = Math.max(...spec);
		expect(Math.abs(peak - db((0.5 * 2) / Math.SQRT2))).toBeLessThan(0.01); // HFT95 flatness ≤ 0.0044 dB (Heinzel et al. 2002)
		const r2 = an.analyze(x, 2);
		expect(r2).toBe(r);
		expect(an.spectrumDbv).toBe(spec);
	});

	it('power and exponential averaging smooth the noise spectrum', () => {
		const n = 4096;
		const spread = (mode: 'none' | 'power' | 'exponential') => {
			const an = new Analyzer(n, FS, { averaging: mode, averages: 16, alpha: 1 / 16 });
			let s: Float32Array = new Float32Array(0);
			for (let i = 0; i < 64; i++) {
				an.analyze(synth(FS, n, [{ f: 1000, a: 0.5 }], 1e-3, 100 + i));
				s = an.spectrumDbv;
			}
			// Standard deviation of the dB spectrum over a noise-only stretch (5–15 kHz).
			const k0 = Math.round(5000 / (FS / n));
			const k1 = Math.round(15000 / (FS / n));
			const v = Array.from(s.subarray(k0, k1));
			const m = v.reduce((a, b) => a + b, 0) / v.length;
			return { sd: Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / v.length), mean: m };
		};
		const none = spread('none');
		const power = spread('power');
		const expo = spread('exponential');
		// Averaging K periodograms divides the power variance by K: √16 = 4 for the power mode.
		expect(power.sd).toBeLessThan(none.sd / 2.5);
		expect(expo.sd).toBeLessThan(none.sd / 2);
		// The mean level of noise is kept (in power); the dB mean of one periodogram sits 2.5 dB low (χ² with 2 dof).
		expect(Math.abs(power.mean - none.mean - 2.5)).toBeLessThan(0.6);
	});

	it('rejects bad sizes, short input and empty bands with a clear RangeError', () => {
		expect(() => new Analyzer(1000, FS)).toThrow(/power of two/);
		expect(() => analyzeChannel(new Float32Array(1000), FS, 1, { fftSize: 4096 })).toThrow(
			/need at least 4096/
		);
		expect(() => new Analyzer(4096, FS, { bandHz: [30000, 40000] })).toThrow(/empty/);
		expect(defaultFftSize(1_000_000)).toBe(262144);
		expect(defaultFftSize(70000)).toBe(65536);
	});
});
