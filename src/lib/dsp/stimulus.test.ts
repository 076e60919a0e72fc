// The stimulus condition: residual noise and hum with the generator off ('none'), the no-signal state
// with a tone stimulus, and the figures that only mean something with a tone.
// Expected values are computed here from outside sources, never read back from the library:
// the components' rms summed by hand (REFERENCES.md §5), A-weighting gains from the IEC 61672-1 formula
// written out below (REFERENCES.md §1) and white noise integrated over the band in closed form.
import { describe, expect, it } from 'vitest';
import { analyzeChannel, analyzeFrames } from './analyzer';

const RATE = 48000;
const N = 1 << 18;

/** Deterministic Gaussian noise (mulberry32 + Box-Muller), rms `sigma`. */
function gaussian(n: number, sigma: number, seed = 12345): Float64Array {
	let a = seed >>> 0;
	const rnd = () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
	const out = new Float64Array(n);
	for (let i = 0; i < n; i += 2) {
		const u = Math.max(rnd(), 1e-300);
		const v = rnd();
		const r = Math.sqrt(-2 * Math.log(u)) * sigma;
		out[i] = r * Math.cos(2 * Math.PI * v);
		if (i + 1 < n) out[i + 1] = r * Math.sin(2 * Math.PI * v);
	}
	return out;
}

/** Volts → samples at `fs` volts full scale (Float32, as a capture file holds them). */
function toSamples(v: Float64Array, fs: number): Float32Array {
	const out = new Float32Array(v.length);
	for (let i = 0; i < v.length; i++) out[i] = v[i] / fs;
	return out;
}

// IEC 61672-1 (2013) Annex E: A(f) = 20·lg[f4²·f⁴ / ((f²+f1²)·√(f²+f2²)·√(f²+f3²)·(f²+f4²))] − A1000,
// f1 = 20.598997 Hz, f2 = 107.65265 Hz, f3 = 737.86223 Hz, f4 = 12194.217 Hz, A1000 = −2.000 dB
// (REFERENCES.md §1). Written out here so the check does not use the library's weighting code.
const F1 = 20.598997;
const F2 = 107.65265;
const F3 = 737.86223;
const F4 = 12194.217;
const A1000_DB = -2.0;
function iecAPowerGain(f: number): number {
	const f2 = f * f;
	const ra =
		(F4 * F4 * f2 * f2) / ((f2 + F1 * F1) * Math.sqrt((f2 + F2 * F2) * (f2 + F3 * F3)) * (f2 + F4 * F4));
	return ra * ra * 10 ** (-A1000_DB / 10);
}

/**
 * ∫ |A(f)|² df from fLo to fHi in closed form. |R_A|² = f4⁴·x⁴ / ((x+a)²(x+b)(x+c)(x+d)²) with x = f²,
 * a = f1², b = f2², c = f3², d = f4²: partial fractions in x, then ∫df/(f²+p) = atan(f/√p)/√p and
 * ∫df/(f²+p)² = f/(2p(f²+p)) + atan(f/√p)/(2p√p) (standard integrals).
 */
function iecAIntegral(fLo: number, fHi: number): number {
	const a = F1 * F1;
	const b = F2 * F2;
	const c = F3 * F3;
	const d = F4 * F4;
	// x⁴/((x+a)²(x+b)(x+c)(x+d)²) = A2/(x+a)² + A1/(x+a) + B/(x+b) + C/(x+c) + D2/(x+d)² + D1/(x+d)
	// Double pole at −p with the rest g(x): coefficient of 1/(x+p)² is g(−p), of 1/(x+p) is g′(−p),
	// and g′/g = 4/x − Σ 1/(x+q) over the other factors (log-derivative).
	const gA = (x: number) => x ** 4 / ((x + b) * (x + c) * (x + d) ** 2);
	const gD = (x: number) => x ** 4 / ((x + a) ** 2 * (x + b) * (x + c));
	const A2 = gA(-a);
	const A1 = gA(-a) * (4 / -a - 1 / (b - a) - 1 / (c - a) - 2 / (d - a));
	const D2 = gD(-d);
	const D1 = gD(-d) * (4 / -d - 2 / (a - d) - 1 / (b - d) - 1 / (c - d));
	const B = b ** 4 / ((a - b) ** 2 * (c - b) * (d - b) ** 2);
	const C = c ** 4 / ((a - c) ** 2 * (b - c) * (d - c) ** 2);
	const i1 = (p: number, f: number) => Math.atan(f / Math.sqrt(p)) / Math.sqrt(p);
	const i2 = (p: number, f: number) =>
		f / (2 * p * (f * f + p)) + Math.atan(f / Math.sqrt(p)) / (2 * p * Math.sqrt(p));
	const F = (f: number) =>
		A2 * i2(a, f) + A1 * i1(a, f) + B * i1(b, f) + C * i1(c, f) + D2 * i2(d, f) + D1 * i1(d, f);
	return d * d * (F(fHi) - F(fLo)) * 10 ** (-A1000_DB / 10);
}

const db = (x: number) => 20 * Math.log10(x);

describe('hum + hiss with no stimulus (REFERENCES.md §1, §5)', () => {
	// 250 µV at 100 Hz, 60 µV at 200 Hz, 15 µV white noise (rms over 0…24 kHz), 48 kHz.
	const HUM1 = 250e-6;
	const HUM2 = 60e-6;
	const WHITE = 15e-6;
	const FS = 2e-3; // 2 mV peak full scale keeps the float32 samples well scaled
	const noise = gaussian(N, WHITE);
	const v = new Float64Array(N);
	for (let i = 0; i < N; i++) {
		const t = i / RATE;
		v[i] =
			HUM1 * Math.SQRT2 * Math.sin(2 * Math.PI * 100 * t + 0.3) +
			HUM2 * Math.SQRT2 * Math.sin(2 * Math.PI * 200 * t + 1.1) +
			noise[i];
	}
	const samples = toSamples(v, FS);
	// The white noise actually generated (its sample rms), spread evenly over 0…Nyquist.
	let s2 = 0;
	for (let i = 0; i < N; i++) s2 += noise[i] * noise[i];
	const whiteRms = Math.sqrt(s2 / N);
	const BAND: [number, number] = [20, 20000];
	const nyq = RATE / 2;
	const whiteDensity = (whiteRms * whiteRms) / nyq; // V²/Hz, flat (white)

	it('reads the total in-band rms unweighted, within ±0.1 dB (hand sum of rms², §5)', () => {
		const r = analyzeChannel(samples, RATE, FS, { stimulus: 'none', mainsHz: 50 });
		// Uncorrelated components add in power: V² = 250² + 60² + white² × (band / Nyquist).
		const expected = Math.sqrt(HUM1 ** 2 + HUM2 ** 2 + whiteDensity * (BAND[1] - BAND[0]));
		expect(expected * 1e6).toBeCloseTo(257.4, 0); // the "about 257 µV"
		expect(Math.abs(db(r.noiseVrms / expected))).toBeLessThan(0.1);
		expect(r.signal).toBe(false);
		expect(r.signalReason).toMatch(/no stimulus/);
		expect(r.frequencyHz).toBeNull();
		expect(r.thdPercent).toBeNull();
		expect(r.thdnPercent).toBeNull();
		expect(r.snrDb).toBeNull();
		expect(r.sinadDb).toBeNull();
		expect(r.harmonics).toEqual([]);
	});

	it('reads the A-weighted total within ±0.3 dB (IEC 61672-1 formula, closed-form white integral, §1)', () => {
		const r = analyzeChannel(samples, RATE, FS, { stimulus: 'none', mainsHz: 50 });
		const humA = HUM1 ** 2 * iecAPowerGain(100) + HUM2 ** 2 * iecAPowerGain(200);
		const whiteA = whiteDensity * iecAIntegral(BAND[0], BAND[1]);
		const expected = Math.sqrt(humA + whiteA);
		expect(Math.abs(db(r.noiseWeightedVrms / expected))).toBeLessThan(0.3);
		// The formula itself against the IEC 61672-1 table (rounded to 0.1 dB, at the exact base-10 band
		// frequencies): −19.1 dB at 100 Hz, −10.9 dB at 200 Hz.
		expect(Math.abs(10 * Math.log10(iecAPowerGain(100)) + 19.1)).toBeLessThan(0.1);
		expect(Math.abs(10 * Math.log10(iecAPowerGain(200)) + 10.9)).toBeLessThan(0.1);
		// And the closed form against a plain midpoint sum of the same formula.
		let sum = 0;
		const steps = 200000;
		const h = (BAND[1] - BAND[0]) / steps;
		for (let i = 0; i < steps; i++) sum += iecAPowerGain(BAND[0] + (i + 0.5) * h) * h;
		expect(iecAIntegral(BAND[0], BAND[1]) / sum).toBeCloseTo(1, 4);
	});

	it('breaks the hum down by mains order: 100 Hz (ripple) and 200 Hz, mains itself near the floor', () => {
		const r = analyzeChannel(samples, RATE, FS, { stimulus: 'none', mainsHz: 50 });
		expect(r.hum.map((h) => h.order)).toEqual([1, 2, 3, 4, 5, 6, 7, 8, 9, 10]);
		const at = (o: number) => r.hum.find((h) => h.order === o)!;
		expect(at(2).frequencyHz).toBeCloseTo(100, 1);
		expect(Math.abs(db(at(2).levelVrms / HUM1))).toBeLessThan(0.1);
		expect(Math.abs(db(at(4).levelVrms / HUM2))).toBeLessThan(0.1);
		expect(at(2).levelDbv).toBeCloseTo(db(HUM1), 1); // dBV re 1 V (§5)
		// 50 Hz is absent: what the fit finds there is the white noise in a few bins, far below 1 µV.
		expect(at(1).levelVrms).toBeLessThan(1e-6);
	});

	it('60 Hz mains: the breakdown follows 60, 120, 180 … Hz', () => {
		const r = analyzeChannel(samples, RATE, FS, { stimulus: 'none', mainsHz: 60 });
		expect(r.hum[0].frequencyHz).toBeCloseTo(60, 0);
		expect(r.hum[9].frequencyHz).toBeCloseTo(600, 0);
		// Neither 100 nor 200 Hz is a 60 Hz order: nothing large found.
		for (const h of r.hum) expect(h.levelVrms).toBeLessThan(5e-6);
	});

	it("today's tone analysis of the same file locks onto the hum (the bug the stimulus fixes)", () => {
		const r = analyzeChannel(samples, RATE, FS, { stimulus: 'tone' });
		// With a tone stimulus the 100 Hz hum counts as "the" tone and is removed from the noise.
		expect(r.frequencyHz).toBeCloseTo(100, 1);
		expect(r.noiseVrms).toBeLessThan(20e-6);
	});

	it('with an expected generator frequency the hum is not taken for the stimulus: no signal', () => {
		const r = analyzeChannel(samples, RATE, FS, { stimulus: 'tone', expectedFrequencyHz: 1000 });
		expect(r.signal).toBe(false);
		expect(r.signalReason).toMatch(/not the 1000 Hz stimulus/);
		expect(r.thdPercent).toBeNull();
		expect(r.thdnPercent).toBeNull();
		expect(r.frequencyHz).toBeNull();
		// What is left to read is the total in band, as with no stimulus.
		const expected = Math.sqrt(HUM1 ** 2 + HUM2 ** 2 + whiteDensity * (BAND[1] - BAND[0]));
		expect(Math.abs(db(r.noiseVrms / expected))).toBeLessThan(0.1);
	});

	it('S/N against a stated reference: 20·lg(Vref/noise), reference named (§5)', () => {
		const ref = { vrms: Math.sqrt(1 * 8), label: 're 1 W into 8 Ω' }; // P = V²/R → V = √(P·R)
		const res = analyzeFrames([samples], RATE, FS, { stimulus: 'none', snReference: ref });
		const r = res.channels[0];
		expect(r.snDb).toBeCloseTo(db(ref.vrms / r.noiseVrms), 6);
		expect(r.snWeightedDb).toBeCloseTo(db(ref.vrms / r.noiseWeightedVrms), 6);
		expect(res.conditions.snReference?.label).toBe('re 1 W into 8 Ω');
		expect(res.conditions.stimulus).toBe('none');
	});
});

describe('no-signal state with a tone stimulus (§6)', () => {
	it('an open input (noise only) reads "no signal", not a THD', () => {
		const x = toSamples(gaussian(1 << 16, 1e-4, 99), 1);
		const r = analyzeChannel(x, RATE, 1, { stimulus: 'tone', referenceVrms: 0.5, loadOhms: 8 });
		expect(r.signal).toBe(false);
		expect(r.signalReason).toMatch(/no tone stands 10 dB above the noise/);
		expect(r.thdPercent).toBeNull();
		expect(r.thdDb).toBeNull();
		expect(r.thdnPercent).toBeNull();
		expect(r.snrDb).toBeNull();
		expect(r.gainDb).toBeNull();
		expect(r.powerW).toBeUndefined();
		// The noise is the whole in-band rms: white noise of σ over 20 Hz–20 kHz of 24 kHz (§5).
		expect(Math.abs(db(r.noiseVrms / (1e-4 * Math.sqrt(19980 / 24000))))).toBeLessThan(0.2);
	});

	it('a tone 20 dB above the in-band noise is a signal; 6 dB above is not (margin 10 dB)', () => {
		const n = 1 << 16;
		const noise = gaussian(n, 1e-3, 7);
		const inBand = 1e-3 * Math.sqrt(19980 / 24000);
		const make = (snrDb: number) => {
			const a = inBand * 10 ** (snrDb / 20);
			const v = new Float64Array(n);
			for (let i = 0; i < n; i++) v[i] = a * Math.SQRT2 * Math.sin((2 * Math.PI * 997 * i) / RATE) + noise[i];
			return toSamples(v, 1);
		};
		const loud = analyzeChannel(make(20), RATE, 1, { stimulus: 'tone', expectedFrequencyHz: 997 });
		expect(loud.signal).toBe(true);
		expect(loud.signalReason).toBeNull();
		expect(loud.frequencyHz).toBeCloseTo(997, 0);
		expect(loud.snrDb!).toBeCloseTo(20, 0);
		const weak = analyzeChannel(make(6), RATE, 1, { stimulus: 'tone' });
		expect(weak.signal).toBe(false);
		// A lower margin accepts it again (the margin is an option, not a constant).
		const lenient = analyzeChannel(make(6), RATE, 1, { stimulus: 'tone', toneMarginDb: 3 });
		expect(lenient.signal).toBe(true);
	});
});

describe('two-tone stimuli: IMD per channel, THD hidden (REFERENCES.md §7)', () => {
	const n = 1 << 16;
	const tone = (f: number, a: number, i: number, ph = 0) => a * Math.sin((2 * Math.PI * f * i) / RATE + ph);

	it('SMPTE 60 Hz + 7 kHz at 4:1 with known sidebands: d2, d3 and IMD by the definition', () => {
		const A = 0.1; // HF tone peak
		const s2 = A * 0.003; // each second-order sideband (7000 ± 60 Hz)
		const s3 = A * 0.001; // each third-order sideband (7000 ± 120 Hz)
		const x = new Float32Array(n);
		for (let i = 0; i < n; i++)
			x[i] =
				tone(60, 4 * A, i) +
				tone(7000, A, i, 0.2) +
				tone(6940, s2, i, 0.4) +
				tone(7060, s2, i, 0.9) +
				tone(6880, s3, i, 1.3) +
				tone(7120, s3, i, 2.1);
		const r = analyzeChannel(x, RATE, 1, { stimulus: 'smpte' });
		// Sidebands add linearly within an order, re the HF tone; orders add as rss (§7).
		const d2 = (2 * s2) / A;
		const d3 = (2 * s3) / A;
		expect(r.signal).toBe(true);
		expect(r.imd).not.toBeNull();
		expect(r.imd!.d2Percent).toBeCloseTo(100 * d2, 3);
		expect(r.imd!.d3Percent).toBeCloseTo(100 * d3, 3);
		expect(r.imd!.imdPercent).toBeCloseTo(100 * Math.hypot(d2, d3), 3);
		expect(r.imd!.level2Vrms).toBeCloseTo(A / Math.SQRT2, 5); // rms = peak/√2
		// THD has no meaning with two tones: null, not 0 % or a THD+N of 55 %.
		expect(r.thdPercent).toBeNull();
		expect(r.thdnPercent).toBeNull();
		expect(r.frequencyHz).toBeNull();
	});

	it('twin-tone 19 + 20 kHz 1:1: products re the sum of the tone amplitudes', () => {
		const A = 0.2;
		const p2 = A * 0.002; // 1 kHz
		const p3 = A * 0.0005; // 18 kHz and 21 kHz each
		const x = new Float32Array(n);
		for (let i = 0; i < n; i++)
			x[i] =
				tone(19000, A, i) +
				tone(20000, A, i, 0.7) +
				tone(1000, p2, i) +
				tone(18000, p3, i) +
				tone(21000, p3, i, 1);
		const r = analyzeFrames([x, x], RATE, [1, 2], { stimulus: 'twin-tone' });
		for (const [i, ch] of r.channels.entries()) {
			const d2 = p2 / (2 * A);
			const d3 = (2 * p3) / (2 * A);
			expect(ch.imd!.imdPercent).toBeCloseTo(100 * Math.hypot(d2, d3), 3);
			expect(ch.imd!.imdDb).toBeCloseTo(20 * Math.log10(Math.hypot(d2, d3)), 2);
			// Per channel, with that channel's full scale.
			expect(ch.imd!.level1Vrms).toBeCloseTo(((i + 1) * A) / Math.SQRT2, 5);
		}
		expect(r.conditions.stimulus).toBe('twin-tone');
	});

	it('an FFT too short for the SMPTE spacing says so instead of a number', () => {
		const x = new Float32Array(4096);
		for (let i = 0; i < x.length; i++) x[i] = tone(60, 0.4, i) + tone(7000, 0.1, i);
		const r = analyzeChannel(x, RATE, 1, { stimulus: 'smpte', fftSize: 4096 });
		expect(r.imd).toBeNull();
		expect(r.imdError).toMatch(/need an FFT of at least 16384 samples/);
		expect(r.signal).toBe(false);
	});
});

describe('harmonics beyond the band (REFERENCES.md §6) and overload (§14)', () => {
	const sine = (f: number, peak: number, n = 1 << 15) => {
		const x = new Float32Array(n);
		for (let i = 0; i < n; i++) x[i] = peak * Math.sin((2 * Math.PI * f * i) / RATE + 0.1);
		return x;
	};

	it('a 5 kHz tone in a 20 kHz band: orders 5…10 lie above the band, so THD is understated', () => {
		// h·f > 20 kHz for h ≥ 5 (plain arithmetic); at 1 kHz all ten orders fit.
		expect(analyzeChannel(sine(5000, 0.5), RATE, 1).harmonicsBeyondBand).toEqual([5, 6, 7, 8, 9, 10]);
		expect(analyzeChannel(sine(1000, 0.5), RATE, 1).harmonicsBeyondBand).toEqual([]);
		// 15 kHz at 48 kHz: the 2nd harmonic (30 kHz) is above Nyquist as well.
		expect(analyzeChannel(sine(15000, 0.5), RATE, 1, { bandHz: [20, 24000] }).harmonicsBeyondBand).toEqual([
			2, 3, 4, 5, 6, 7, 8, 9, 10
		]);
	});

	it('flat tops: a sine clipped at 70 % of its peak is flagged; a clean sine is not', () => {
		// 997 Hz: not a divisor of the rate, so the sample phases cover the period evenly.
		const clean = analyzeChannel(sine(997, 0.5), RATE, 1);
		// A sine's crest factor is √2 = 3.01 dB (§14): above the 2.9 dB gate, so flat tops are not even counted.
		expect(clean.clipping.crestFactorDb).toBeCloseTo(20 * Math.log10(Math.SQRT2), 2);
		expect(clean.clipping.flatTopPercent).toBeNull();
		expect(clean.clipping.clipped).toBe(false);
		const x = sine(997, 0.5);
		for (let i = 0; i < x.length; i++) x[i] = Math.max(-0.35, Math.min(0.35, x[i]));
		const clipped = analyzeChannel(x, RATE, 1);
		// Share of time |sin| ≥ c is 1 − (2/π)·asin(c) (plain trigonometry, §14): 50.6 % for c = 0.7.
		expect(clipped.clipping.flatTopPercent!).toBeCloseTo(100 * (1 - (2 / Math.PI) * Math.asin(0.7)), 0);
		expect(clipped.clipping.clipped).toBe(true);
		expect(clipped.clipping.reason).toMatch(/flat tops/);
		expect(clipped.signal).toBe(true); // an overloaded amplifier still has a signal
	});

	it('one half clipped (a weak output device): flagged for that half', () => {
		const x = sine(997, 0.5);
		for (let i = 0; i < x.length; i++) x[i] = Math.min(0.43, x[i]); // positive half stops at 86 % of the peak
		const r = analyzeChannel(x, RATE, 1);
		// Share of a period with sin ≥ c is (π − 2·asin c)/(2π) (plain trigonometry, §14): 17.0 % for c = 0.86.
		const expected = (100 * (Math.PI - 2 * Math.asin(0.86))) / (2 * Math.PI);
		expect(expected).toBeCloseTo(17.0, 0);
		expect(r.clipping.clipped).toBe(true);
		expect(r.clipping.reason).toMatch(/positive half only: 17 %/);
		// The unclipped negative peak keeps the overall crest factor near a sine's 3.01 dB.
		expect(r.clipping.crestFactorDb).toBeGreaterThan(2.9);
	});

	it('samples at digital full scale are an input overload', () => {
		const x = sine(1000, 1.2);
		for (let i = 0; i < x.length; i++) x[i] = Math.max(-1, Math.min(1, x[i]));
		const r = analyzeChannel(x, RATE, 1);
		expect(r.clipping.fullScaleSamples).toBeGreaterThan(0);
		expect(r.clipping.reason).toMatch(/digital full scale/);
	});
});

describe('DC offset (REFERENCES.md §5)', () => {
	it('is read in volts with or without a tone, and never counted as noise', () => {
		const n = 1 << 16;
		const hiss = gaussian(n, 20e-6, 3);
		const quiet = new Float32Array(n);
		const loud = new Float32Array(n);
		for (let i = 0; i < n; i++) {
			quiet[i] = 0.025 + hiss[i]; // +25 mV offset, 20 µV hiss, 1 V full scale
			loud[i] = -0.04 + 0.5 * Math.sin((2 * Math.PI * 997 * i) / RATE) + hiss[i];
		}
		const none = analyzeChannel(quiet, RATE, 1, { stimulus: 'none' });
		expect(none.dcVolts).toBeCloseTo(0.025, 6);
		// The in-band total is the hiss alone: σ·√(band/Nyquist) (§5), the offset excluded.
		expect(Math.abs(db(none.noiseVrms / (20e-6 * Math.sqrt(19980 / 24000))))).toBeLessThan(0.2);
		const tone = analyzeChannel(loud, RATE, 1);
		expect(tone.dcVolts).toBeCloseTo(-0.04, 6);
	});
});
