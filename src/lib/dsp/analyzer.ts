// The measurement engine: one windowed FFT per frame, a 4-parameter sine fit of the fundamental on
// the spectrum, fits of its harmonics, subtraction of all of them, and a band-limited sum of what is
// left (the noise); THD+N is the fitted harmonics plus that noise.
// `Analyzer` reuses every buffer (for the live worker); analyzeChannel/analyzeFrames wrap it.

import FFT from 'fft.js';
import { ANALYSIS_WINDOW, makeWindow, windows, type WindowName } from './windows';
import { ToneFitter, interpolatePeak } from './tonefit';
import { aWeightingPowerGain, aWeightingTable } from './weighting';
import { vrmsToDbu, wattsIntoLoad } from './units';
import { imdOnSpectrum } from './imd';
import type {
	AnalysisOptions,
	AnalysisResult,
	ChannelResult,
	ClippingResult,
	HarmonicResult,
	HumComponent,
	MainsHz,
	SnReference,
	Stimulus,
	Weighting
} from './types';
import type { ImdResult } from './imd';

/** Floor for dB figures of zero quantities, so results stay finite (JSON has no −Infinity). */
export const MIN_DB = -300;
export const MAX_FFT_SIZE = 1 << 20;
export const MIN_FFT_SIZE = 256;
export const DEFAULT_FFT_CAP = 262144;
export const DEFAULT_BAND_HZ: [number, number] = [20, 20000];
/** Default margin of the fitted tone over the in-band noise for it to count as a signal, dB. */
export const DEFAULT_TONE_MARGIN_DB = 10;
/** Mains orders in the hum breakdown (1 = the mains frequency). */
export const HUM_ORDERS = 10;
/** Share of samples at the frame's own peaks (within 0.5 %) above which the waveform has flat tops, %. */
export const FLAT_TOP_PERCENT = 15;
/** Crest factor below which a frame is checked for flat tops, dB (a sine's is 3.01 dB). */
export const CLIP_CREST_DB = 2.9;

export function db10(ratio: number): number {
	return ratio > 0 ? Math.max(MIN_DB, 10 * Math.log10(ratio)) : MIN_DB;
}
export function db20(ratio: number): number {
	return ratio > 0 ? Math.max(MIN_DB, 20 * Math.log10(ratio)) : MIN_DB;
}

export function isPowerOfTwo(n: number): boolean {
	return Number.isInteger(n) && n > 0 && (n & (n - 1)) === 0;
}

/** Largest power of two ≤ length, capped (the default span the CLI and analyzeChannel use). */
export function defaultFftSize(length: number, cap = DEFAULT_FFT_CAP): number {
	let n = MIN_FFT_SIZE;
	while (n * 2 <= length && n * 2 <= cap) n *= 2;
	return n;
}

// Plans, windows and weighting tables are read-only once built: share them between analysers so the
// one-shot server/CLI path does not rebuild them per call.
const fftCache = new Map<number, FFT>();
const windowCache = new Map<string, Float64Array>();
const weightCache = new Map<string, Float64Array>();
const oneShotCache = new Map<string, Analyzer>();
const CACHE_LIMIT = 8;

function cached<K, V>(map: Map<K, V>, key: K, make: () => V, limit = CACHE_LIMIT): V {
	let v = map.get(key);
	if (v === undefined) {
		if (map.size >= limit) map.delete(map.keys().next().value as K);
		v = make();
		map.set(key, v);
	}
	return v;
}

export function sharedFft(n: number): FFT {
	return cached(fftCache, n, () => new FFT(n));
}
export function sharedWindow(name: WindowName, n: number): Float64Array {
	return cached(windowCache, `${name}/${n}`, () => makeWindow(name, n));
}
function sharedAWeights(bins: number, binHz: number): Float64Array {
	return cached(weightCache, `${bins}/${binHz}`, () => aWeightingTable(bins, binHz));
}

export type AveragingMode = 'none' | 'power' | 'exponential';

export interface AnalyzerOptions extends Omit<AnalysisOptions, 'fftSize'> {
	/** 'power': mean of the last `averages` frames; 'exponential': smoothing by `alpha`. */
	averaging?: AveragingMode;
	/** Exponential smoothing factor 0 < alpha ≤ 1 (weight of the newest frame). Default 0.25. */
	alpha?: number;
	/** Keep a magnitude spectrum for plotting (default true). */
	spectrum?: boolean;
}

// Layout of the per-frame figures vector (sample units², before full-scale scaling).
const V_P1 = 0; // fundamental power
const V_NU = 1; // fundamental frequency, bins
const V_DC = 2; // DC, sample units
const V_T = 3; // total in-band power
const V_TA = 4; // total in-band power, A-weighted
const V_R = 5; // residual in band (all but the fundamental): in-band harmonics + noise
const V_RA = 6; // residual, A-weighted
const V_N = 7; // noise (all but fundamental, harmonics, DC) in band
const V_NA = 8; // noise, A-weighted
const V_MNU = 9; // fitted mains frequency, bins (stimulus 'none')
const V_H = 10; // harmonic powers from order 2 (NaN when outside the band); then HUM_ORDERS hum powers

interface ResolvedConditions {
	window: WindowName;
	bandHz: [number, number];
	weighting: Weighting;
	loadOhms: number | null;
	referenceVrms: number | null;
	maxHarmonic: number;
	stimulus: Stimulus;
	mainsHz: MainsHz;
	toneMarginDb: number;
	expectedFrequencyHz: number | null;
	imdF1Hz: number | null;
	imdF2Hz: number | null;
	snReference: SnReference | null;
}

function resolveConditions(sampleRateHz: number, options: AnalysisOptions): ResolvedConditions {
	const nyquist = sampleRateHz / 2;
	const band = options.bandHz ?? DEFAULT_BAND_HZ;
	const lo = Math.max(0, band[0]);
	const hi = Math.min(nyquist, band[1]);
	if (!(hi > lo))
		throw new RangeError(`band ${band[0]}–${band[1]} Hz is empty at ${sampleRateHz} Hz sample rate`);
	const window = options.window ?? ANALYSIS_WINDOW;
	if (!(window in windows)) throw new RangeError(`unknown window "${window}"`);
	const maxHarmonic = Math.max(2, Math.min(50, Math.floor(options.maxHarmonic ?? 10)));
	const stimulus = options.stimulus ?? 'tone';
	if (!['tone', 'none', 'smpte', 'twin-tone'].includes(stimulus))
		throw new RangeError(`unknown stimulus "${stimulus}" (allowed: tone, none, smpte, twin-tone)`);
	const mainsHz = options.mainsHz ?? 50;
	if (mainsHz !== 50 && mainsHz !== 60)
		throw new RangeError(`mains frequency must be 50 or 60 Hz, got ${mainsHz}`);
	const ref = options.snReference;
	return {
		stimulus,
		mainsHz,
		toneMarginDb: Number.isFinite(options.toneMarginDb)
			? (options.toneMarginDb as number)
			: DEFAULT_TONE_MARGIN_DB,
		expectedFrequencyHz:
			options.expectedFrequencyHz && options.expectedFrequencyHz > 0 ? options.expectedFrequencyHz : null,
		imdF1Hz: options.imdF1Hz && options.imdF1Hz > 0 ? options.imdF1Hz : null,
		imdF2Hz: options.imdF2Hz && options.imdF2Hz > 0 ? options.imdF2Hz : null,
		snReference: ref && ref.vrms > 0 ? { vrms: ref.vrms, label: ref.label } : null,
		window,
		bandHz: [lo, hi],
		weighting: options.weighting ?? 'none',
		loadOhms: options.loadOhms && options.loadOhms > 0 ? options.loadOhms : null,
		referenceVrms: options.referenceVrms && options.referenceVrms > 0 ? options.referenceVrms : null,
		maxHarmonic
	};
}

/**
 * Reusable analyser for one channel at a fixed FFT size and sample rate. Steady-state calls allocate
 * nothing: the returned ChannelResult and the spectrum array are reused by the next call (copy them,
 * e.g. with structuredClone, to keep them). Use one Analyzer per channel: averaging state is per channel.
 */
export class Analyzer {
	readonly fftSize: number;
	readonly sampleRateHz: number;
	readonly binHz: number;
	readonly bins: number;
	readonly conditions: ResolvedConditions;
	private averaging: AveragingMode;
	private averages: number;
	private alpha: number;
	private readonly wantSpectrum: boolean;

	private readonly fft: FFT;
	private readonly awin: Float64Array;
	private readonly dwin: Float64Array | null; // display window when it differs from the analysis one
	private readonly frame: Float64Array;
	private readonly spec: Float64Array;
	private readonly resid: Float64Array;
	private readonly pw: Float64Array; // |X_k|² of the analysis spectrum
	private readonly dspec: Float64Array | null;
	private readonly fitter: ToneFitter;
	private readonly aw2: Float64Array;
	private readonly powerScale: number; // |X|² → mean-square (one side), analysis window
	private readonly dispScale: number; // |X|² → V rms² per bin at 1 V full scale, display window
	private readonly kLo: number;
	private readonly kHi: number;

	private readonly nv: number;
	private readonly cur: Float64Array;
	private readonly avg: Float64Array;
	private readonly ring: Float64Array;
	private readonly binPow: Float64Array;
	private readonly binAvg: Float64Array;
	private readonly binRing: Float64Array | null;
	private readonly binSum: Float64Array | null;
	private frames = 0;
	private ringPos = 0;
	private readonly _spectrumDbv: Float32Array;
	private spectrumDirty = false;
	private lastFullScale = 1;
	private readonly result: ChannelResult;
	private sumP = 0;
	private readonly kv = new Float64Array(2);
	private sumPA = 0;
	private readonly ivStart: Int32Array;
	private readonly ivEnd: Int32Array;
	private ivCount = 0;
	private readonly hA: Float64Array;
	private readonly hB: Float64Array;
	private readonly toneNu: Float64Array;
	private readonly humA: Float64Array;
	private readonly humB: Float64Array;
	/** Last frame's IMD (not averaged) and time-domain overload signs. */
	private lastImd: ImdResult | null = null;
	private lastImdError: string | null = null;
	private readonly clip: ClippingResult = {
		fullScaleSamples: 0,
		flatTopPercent: 0,
		crestFactorDb: 0,
		clipped: false,
		reason: null
	};

	constructor(fftSize: number, sampleRateHz: number, options: AnalyzerOptions = {}) {
		if (!isPowerOfTwo(fftSize) || fftSize < MIN_FFT_SIZE || fftSize > MAX_FFT_SIZE)
			throw new RangeError(
				`FFT size must be a power of two from ${MIN_FFT_SIZE} to ${MAX_FFT_SIZE}, got ${fftSize}`
			);
		if (!(sampleRateHz > 0)) throw new RangeError(`sample rate must be positive, got ${sampleRateHz}`);
		this.fftSize = fftSize;
		this.sampleRateHz = sampleRateHz;
		this.binHz = sampleRateHz / fftSize;
		this.bins = fftSize / 2 + 1;
		this.conditions = resolveConditions(sampleRateHz, options);
		this.averaging = options.averaging ?? ((options.averages ?? 1) > 1 ? 'power' : 'none');
		this.averages = Math.max(1, Math.floor(options.averages ?? 1));
		this.alpha = Math.min(1, Math.max(1e-4, options.alpha ?? 0.25));
		this.wantSpectrum = options.spectrum ?? true;

		this.fft = sharedFft(fftSize);
		this.awin = sharedWindow(ANALYSIS_WINDOW, fftSize);
		this.dwin =
			this.wantSpectrum && this.conditions.window !== ANALYSIS_WINDOW
				? sharedWindow(this.conditions.window, fftSize)
				: null;
		this.frame = new Float64Array(fftSize);
		this.spec = new Float64Array(2 * fftSize);
		this.resid = new Float64Array(2 * this.bins);
		this.pw = new Float64Array(this.bins);
		this.dspec = this.dwin ? new Float64Array(2 * fftSize) : null;
		this.fitter = new ToneFitter(fftSize, ANALYSIS_WINDOW, Math.max(HUM_ORDERS, this.conditions.maxHarmonic));
		this.humA = new Float64Array(HUM_ORDERS);
		this.humB = new Float64Array(HUM_ORDERS);
		this.aw2 = sharedAWeights(this.bins, this.binHz);

		let s2 = 0;
		for (let i = 0; i < fftSize; i++) s2 += this.awin[i] * this.awin[i];
		this.powerScale = 2 / (fftSize * s2);
		const dw = this.dwin ?? this.awin;
		let s1 = 0;
		for (let i = 0; i < fftSize; i++) s1 += dw[i];
		// A bin-centred sine of amplitude A gives |X| = A·Σw/2, so V rms² = |X|²·2/(Σw)².
		this.dispScale = 2 / (s1 * s1);

		const [lo, hi] = this.conditions.bandHz;
		this.kLo = Math.max(0, Math.ceil(lo / this.binHz - 1e-9));
		this.kHi = Math.min(this.bins - 1, Math.floor(hi / this.binHz + 1e-9));
		if (this.kHi - this.kLo < 2)
			throw new RangeError(`band ${lo}–${hi} Hz holds fewer than 3 bins at FFT size ${fftSize}`);

		this.nv = V_H + this.conditions.maxHarmonic - 1 + HUM_ORDERS;
		this.ivStart = new Int32Array(this.conditions.maxHarmonic + 2);
		this.hA = new Float64Array(this.conditions.maxHarmonic);
		this.hB = new Float64Array(this.conditions.maxHarmonic);
		this.toneNu = new Float64Array(this.conditions.maxHarmonic);
		this.ivEnd = new Int32Array(this.conditions.maxHarmonic + 2);
		this.cur = new Float64Array(this.nv);
		this.avg = new Float64Array(this.nv);
		this.ring = new Float64Array(this.nv * this.averages);
		this.binPow = new Float64Array(this.wantSpectrum ? this.bins : 0);
		this.binAvg = new Float64Array(this.wantSpectrum ? this.bins : 0);
		this.binRing =
			this.wantSpectrum && this.averages > 1 ? new Float64Array(this.bins * this.averages) : null;
		this.binSum = this.binRing ? new Float64Array(this.bins) : null;
		this._spectrumDbv = new Float32Array(this.wantSpectrum ? this.bins : 0);

		const harmonics: HarmonicResult[] = [];
		this.result = {
			channel: 0,
			stimulus: this.conditions.stimulus,
			signal: false,
			signalReason: null,
			frequencyHz: 0,
			levelVrms: 0,
			levelDbv: MIN_DB,
			levelDbu: MIN_DB,
			levelDbfs: MIN_DB,
			thdPercent: 0,
			thdDb: MIN_DB,
			thdnPercent: 0,
			thdnDb: MIN_DB,
			harmonicsBeyondBand: [],
			noiseVrms: 0,
			noiseDbv: MIN_DB,
			snrDb: 0,
			noiseWeightedVrms: 0,
			noiseWeightedDbv: MIN_DB,
			snrWeightedDb: 0,
			snDb: null,
			snWeightedDb: null,
			sinadDb: 0,
			enob: 0,
			totalVrms: 0,
			dcVolts: 0,
			harmonics,
			hum: [],
			imd: null,
			imdError: null,
			clipping: { ...this.clip }
		};
	}

	/** Frames currently in the average. */
	get averagedFrames(): number {
		return this.averaging === 'power' ? Math.min(this.frames, this.averages) : Math.min(this.frames, 1);
	}

	setAveraging(mode: AveragingMode, framesOrAlpha?: number): void {
		if (mode === 'power' && framesOrAlpha && Math.floor(framesOrAlpha) !== this.averages)
			throw new RangeError('the number of power averages is fixed at construction; make a new Analyzer');
		if (mode === 'exponential' && framesOrAlpha) this.alpha = Math.min(1, Math.max(1e-4, framesOrAlpha));
		this.averaging = mode;
		this.reset();
	}

	reset(): void {
		this.frames = 0;
		this.ringPos = 0;
		this.avg.fill(0);
		this.ring.fill(0);
		this.binAvg.fill(0);
		this.binRing?.fill(0);
		this.binSum?.fill(0);
	}

	/**
	 * Magnitude spectrum in dBV per bin (bins 0…N/2, display window, averaged), for plotting.
	 * Amplitude-correct for tones: a bin-centred sine reads its rms level.
	 */
	get spectrumDbv(): Float32Array {
		if (this.spectrumDirty) {
			const s = this.dispScale * this.lastFullScale * this.lastFullScale;
			const out = this._spectrumDbv;
			const src = this.binAvg;
			for (let k = 0; k < out.length; k++) {
				const p = src[k] * s;
				out[k] = p > 1e-30 ? 10 * Math.log10(p) : MIN_DB;
			}
			// DC and Nyquist are not split between ±f, so their one-sided rms doubling does not apply.
			if (out.length > 0) {
				out[0] -= 3.0103;
				out[out.length - 1] -= 3.0103;
			}
			this.spectrumDirty = false;
		}
		return this._spectrumDbv;
	}

	/**
	 * Analyses the latest `fftSize` samples of `samples` (instantaneous volts = sample × fullScaleVolts).
	 * The returned object is reused by the next call.
	 */
	analyze(samples: Float32Array | Float64Array, fullScaleVolts = 1, channel = 0): ChannelResult {
		const n = this.fftSize;
		if (samples.length < n) throw new RangeError(`need ${n} samples, got ${samples.length}`);
		const off = samples.length - n;
		this.measureFrame(samples, off);
		// One NaN or infinity poisons every bin; say so rather than return NaN figures.
		if (!Number.isFinite(this.cur[V_T]) || !Number.isFinite(this.cur[V_N]))
			throw new RangeError('the frame holds non-finite samples (NaN or infinity)');
		this.accumulate();
		this.lastFullScale = fullScaleVolts;
		return this.fill(fullScaleVolts, channel);
	}

	/**
	 * Σ|X_k|²·(½ at DC and Nyquist) over bins k0…k1, and the same A-weighted, into sumP/sumPA.
	 * The fits only change bins inside a few short intervals, so the long stretches between them are
	 * summed straight from the spectrum, without copying it.
	 */
	private bandSum(x: Float64Array, k0: number, k1: number): void {
		const aw2 = this.aw2;
		const half = this.fftSize >>> 1;
		let p = 0;
		let pa = 0;
		for (let k = k0; k <= k1; k++) {
			const v = x[2 * k] * x[2 * k] + x[2 * k + 1] * x[2 * k + 1];
			p += v;
			pa += v * aw2[k];
		}
		// Bins 0 and N/2 are not split between ±f: count them once.
		if (k0 === 0 && k1 >= 0) {
			const v = (x[0] * x[0] + x[1] * x[1]) / 2;
			p -= v;
			pa -= v * aw2[0];
		}
		if (k1 === half && k0 <= half) {
			const v = (x[2 * half] * x[2 * half] + x[2 * half + 1] * x[2 * half + 1]) / 2;
			p -= v;
			pa -= v * aw2[half];
		}
		this.sumP = p;
		this.sumPA = pa;
	}

	/** As bandSum, from the bin powers stored in `pw` by the peak search. */
	private powerSum(k0: number, k1: number): void {
		const aw2 = this.aw2;
		const pw = this.pw;
		const half = this.fftSize >>> 1;
		let p = 0;
		let pa = 0;
		for (let k = k0; k <= k1; k++) {
			p += pw[k];
			pa += pw[k] * aw2[k];
		}
		if (k0 === 0 && k1 >= 0) {
			p -= pw[0] / 2;
			pa -= (pw[0] / 2) * aw2[0];
		}
		if (k1 === half && k0 <= half) {
			p -= pw[half] / 2;
			pa -= (pw[half] / 2) * aw2[half];
		}
		this.sumP = p;
		this.sumPA = pa;
	}

	/** Adds the support interval [c − W, c + W] (clipped) to the list, keeping it sorted and merged. */
	private addInterval(center: number): void {
		const w = this.fitter.subtractHalfWidth;
		const a = Math.max(this.kLo, center - w);
		const b = Math.min(this.kHi, center + w);
		if (b < a) return;
		const st = this.ivStart;
		const en = this.ivEnd;
		// Insert, then merge neighbours; the list holds at most maxHarmonic + 1 intervals.
		let i = this.ivCount;
		while (i > 0 && st[i - 1] > a) {
			st[i] = st[i - 1];
			en[i] = en[i - 1];
			i--;
		}
		st[i] = a;
		en[i] = b;
		this.ivCount++;
		let o = 0;
		for (let j = 1; j < this.ivCount; j++) {
			if (st[j] <= en[o] + 1) {
				if (en[j] > en[o]) en[o] = en[j];
			} else {
				o++;
				st[o] = st[j];
				en[o] = en[j];
			}
		}
		this.ivCount = o + 1;
	}

	/** Σ over the support intervals of x (band-limited), into sumP/sumPA. */
	private intervalSum(x: Float64Array): void {
		let p = 0;
		let pa = 0;
		for (let i = 0; i < this.ivCount; i++) {
			this.bandSum(x, this.ivStart[i], this.ivEnd[i]);
			p += this.sumP;
			pa += this.sumPA;
		}
		this.sumP = p;
		this.sumPA = pa;
	}

	/** Level (V rms) of the component at exactly `frequencyHz` in the last analysed frame (e.g. crosstalk). */
	toneVrmsAt(frequencyHz: number): number {
		const nu = frequencyHz / this.binHz;
		if (!(nu > 0 && nu < this.fftSize / 2)) return 0;
		this.fitter.fitFixed(this.spec, nu, false);
		return (this.fitter.amplitude * this.lastFullScale) / Math.SQRT2;
	}

	/** Window, transform, fit, subtract: fills `cur` with this frame's figures. */
	private measureFrame(samples: Float32Array | Float64Array, off: number): void {
		const n = this.fftSize;
		const frame = this.frame;
		const w = this.awin;
		// The window pass also gathers the frame's peaks and power for the overload check (one read of the samples).
		let max = 0;
		let min = 0;
		let s2 = 0;
		for (let i = 0; i < n; i++) {
			const x = samples[off + i];
			frame[i] = x * w[i];
			if (x > max) max = x;
			else if (x < min) min = x;
			s2 += x * x;
		}
		this.fft.realTransform(this.spec, frame);
		const spec = this.spec;
		const cur = this.cur;
		const kLo = this.kLo;
		const kHi = this.kHi;
		const half = n >>> 1;
		const ps = this.powerScale;
		const fit = this.fitter;
		const c = this.conditions;

		// Fundamental: largest in-band bin, refined by the 4-parameter fit.
		// A large DC offset spills into the first few bins; judge those with the DC taken out.
		const reach = fit.subtractHalfWidth;
		const kFirst = Math.max(kLo, 1);
		const kLast = Math.min(kHi, half - 1);
		// One pass stores every in-band bin's power (reused for the noise sums) and finds the peak.
		const pw = this.pw;
		let kPeak = Math.max(kFirst, reach + 1);
		let pPeak = -1;
		for (let k = kLo; k <= kHi; k++) {
			const p = spec[2 * k] * spec[2 * k] + spec[2 * k + 1] * spec[2 * k + 1];
			pw[k] = p;
			if (p > pPeak && k > reach && k >= kFirst && k <= kLast) {
				pPeak = p;
				kPeak = k;
			}
		}
		this.measureClipping(samples, off, max, min, s2);
		if (c.stimulus !== 'tone') {
			this.measureWithoutTone();
			this.displaySpectrum(samples, off);
			return;
		}
		if (kFirst <= reach) {
			let best = spec[2 * kPeak] ** 2 + spec[2 * kPeak + 1] ** 2;
			const dc0 = fit.fitDc(spec);
			const kv = this.kv;
			for (let k = kFirst; k <= Math.min(reach, kLast); k++) {
				fit.kernelAt(k, kv);
				const re = spec[2 * k] - dc0 * kv[0];
				const im = spec[2 * k + 1] - dc0 * kv[1];
				if (re * re + im * im > best) {
					best = re * re + im * im;
					kPeak = k;
				}
			}
		}
		const nu0 = interpolatePeak(spec, kPeak, half);
		const nearDc = nu0 < 2 * fit.fitHalfWidth + 2;
		// Harmonics closer together than their own support: fit fundamental, harmonics and DC jointly. Below
		// 2 bins the series is no longer resolvable; the fundamental and DC alone are then the better fit.
		const crowded = nu0 < 2 * fit.subtractHalfWidth + 2 && nu0 >= 2;
		const hA = this.hA;
		const hB = this.hB;
		const tones = this.toneNu;
		let toneCount = 0;
		let jointDc = 0;
		fit.fitFree(spec, nu0, nearDc);
		let nu = fit.nu;
		let a = fit.a;
		let b = fit.b;
		if (crowded) {
			for (let h = 1; h <= c.maxHarmonic && h * nu < half - 1; h++) tones[toneCount++] = h * nu;
			jointDc = fit.fitHarmonics(spec, nu, toneCount, true, hA, hB);
			nu = fit.nu;
			for (let i = 0; i < toneCount; i++) tones[i] = (i + 1) * nu;
			a = hA[0];
			b = hB[0];
		}
		cur[V_P1] = (a * a + b * b) / 2;
		cur[V_NU] = nu;

		// Bins the fits will touch: DC, the fundamental and the in-band harmonics.
		this.ivCount = 0;
		this.addInterval(0);
		this.addInterval(Math.round(nu));
		const [loHz, hiHz] = c.bandHz;
		for (let h = 2; h <= c.maxHarmonic; h++) {
			const nuH = h * nu;
			const fHz = nuH * this.binHz;
			if (fHz >= loHz && fHz <= hiHz && nuH <= half) this.addInterval(Math.round(nuH));
		}

		// Everything between the intervals is the same in the spectrum and in the residual.
		let outP = 0;
		let outPA = 0;
		let k = kLo;
		for (let i = 0; i <= this.ivCount; i++) {
			const end = i < this.ivCount ? this.ivStart[i] - 1 : kHi;
			if (end >= k) {
				this.powerSum(k, end);
				outP += this.sumP;
				outPA += this.sumPA;
			}
			if (i < this.ivCount) k = this.ivEnd[i] + 1;
		}

		const resid = this.resid;
		if (crowded) {
			// Everything the joint fit touched lies low in the spectrum: copy that stretch whole.
			const top = Math.min(half, Math.round(tones[toneCount - 1]) + reach);
			for (let j = 0; j < 2 * (top + 1); j++) resid[j] = spec[j];
		}
		// Only bins within reach of DC and of the tones change from here on (the intervals lie inside
		// them); copy just those, band or not, before anything is subtracted.
		for (let j = 0; j <= Math.min(half, reach); j++) {
			resid[2 * j] = spec[2 * j];
			resid[2 * j + 1] = spec[2 * j + 1];
		}
		for (let h = 1; h <= c.maxHarmonic; h++) {
			const kh = Math.round(h * nu);
			if (kh - reach > half) break;
			for (let j = Math.max(0, kh - reach); j <= Math.min(half, kh + reach); j++) {
				resid[2 * j] = spec[2 * j];
				resid[2 * j + 1] = spec[2 * j + 1];
			}
		}
		fit.subtract(resid, a, b, nu, 0);
		let dc = fit.dc;
		if (crowded) {
			dc = jointDc;
			fit.subtractDc(resid, dc);
		} else if (nearDc) fit.subtractDc(resid, dc);
		else {
			dc = fit.fitDc(resid);
			fit.subtractDc(resid, dc);
		}
		cur[V_DC] = dc;

		// Harmonics at exact multiples of the fitted frequency, each removed after it is measured.
		let hSum = 0;
		let hSumA = 0;
		for (let h = 2; h <= c.maxHarmonic; h++) {
			const nuH = h * nu;
			const fHz = nuH * this.binHz;
			if (fHz < loHz || fHz > hiHz || nuH > half) {
				cur[V_H + h - 2] = NaN;
				continue;
			}
			let ha: number;
			let hb: number;
			if (crowded && h - 1 < toneCount) {
				ha = hA[h - 1];
				hb = hB[h - 1];
			} else {
				fit.fitFixed(resid, nuH, false);
				ha = fit.a;
				hb = fit.b;
			}
			const ph = (ha * ha + hb * hb) / 2;
			cur[V_H + h - 2] = ph;
			hSum += ph;
			hSumA += ph * aWeightingPowerGain(fHz);
			fit.subtract(resid, ha, hb, nuH, 0);
		}
		this.intervalSum(resid);
		cur[V_N] = (outP + this.sumP) * ps;
		cur[V_NA] = (outPA + this.sumPA) * ps;

		// THD+N residual and in-band total from the fitted tones plus the noise. Summing bins instead would
		// count the window's spill of DC into the band, lose a low tone's spill below it, and add the
		// interference of a low tone with its own negative-frequency image.
		cur[V_R] = hSum + cur[V_N];
		cur[V_RA] = hSumA + cur[V_NA];
		cur[V_T] = cur[V_P1] + cur[V_R];
		cur[V_TA] = cur[V_P1] * aWeightingPowerGain(nu * this.binHz) + cur[V_RA];

		this.displaySpectrum(samples, off);
	}

	/** Magnitude spectrum for plotting (display window), into binPow. */
	private displaySpectrum(samples: Float32Array | Float64Array, off: number): void {
		if (!this.wantSpectrum) return;
		const n = this.fftSize;
		const frame = this.frame;
		let src = this.spec;
		if (this.dwin && this.dspec) {
			const dw = this.dwin;
			for (let i = 0; i < n; i++) frame[i] = samples[off + i] * dw[i];
			this.fft.realTransform(this.dspec, frame);
			src = this.dspec;
		}
		const bp = this.binPow;
		for (let k = 0; k < this.bins; k++) bp[k] = src[2 * k] * src[2 * k] + src[2 * k + 1] * src[2 * k + 1];
	}

	/**
	 * Overload signs in the raw frame: samples at digital full scale, and flat tops (a large share of
	 * samples sitting at the frame's own peaks, which a sine or noise never does). Common practice.
	 * The flat-top count needs a second pass; it is only made when the crest factor is already below
	 * a sine's (3.01 dB), so clean frames cost nothing extra.
	 */
	private measureClipping(
		samples: Float32Array | Float64Array,
		off: number,
		max: number,
		min: number,
		s2: number
	): void {
		const n = this.fftSize;
		const clip = this.clip;
		const peak = Math.max(max, -min);
		const rms = Math.sqrt(s2 / n);
		clip.crestFactorDb = rms > 0 ? 20 * Math.log10(peak / rms) : 0;
		let atFs = 0;
		if (peak >= 0.999)
			for (let i = off; i < off + n; i++) {
				const x = samples[i];
				if (x >= 0.999 || x <= -0.999) atFs++;
			}
		clip.fullScaleSamples = atFs;
		// Each half is judged on its own: a weak device clips one half only (the other peak keeps the
		// overall crest factor near a sine's).
		const crestPos = rms > 0 && max > 0 ? 20 * Math.log10(max / rms) : Infinity;
		const crestNeg = rms > 0 && min < 0 ? 20 * Math.log10(-min / rms) : Infinity;
		let flatPos = 0;
		let flatNeg = 0;
		if (peak > 0 && Math.min(crestPos, crestNeg) < CLIP_CREST_DB) {
			const hi = max > 0 ? max * 0.995 : Infinity;
			const lo = min < 0 ? min * 0.995 : -Infinity;
			for (let i = off; i < off + n; i++) {
				const x = samples[i];
				if (x >= hi) flatPos++;
				else if (x <= lo) flatNeg++;
			}
			clip.flatTopPercent = (100 * (flatPos + flatNeg)) / n;
		} else clip.flatTopPercent = null;
		const posPct = (100 * flatPos) / n;
		const negPct = (100 * flatNeg) / n;
		const half = FLAT_TOP_PERCENT / 2;
		if (atFs > 0) {
			clip.clipped = true;
			clip.reason = `${atFs} samples at digital full scale: the input is overloaded`;
		} else if (posPct >= half && negPct >= half) {
			clip.clipped = true;
			clip.reason = `flat tops: ${(posPct + negPct).toFixed(0)} % of samples sit at the peaks (a sine has about 6 %)`;
		} else if (posPct >= half || negPct >= half) {
			clip.clipped = true;
			const side = posPct >= half ? 'positive' : 'negative';
			clip.reason = `flat tops on the ${side} half only: ${Math.max(posPct, negPct).toFixed(0)} % of samples sit at its peak (a sine has about 3 % per half)`;
		} else {
			clip.clipped = false;
			clip.reason = null;
		}
	}

	/**
	 * Stimulus 'none' and the two-tone stimuli: the total in-band power with DC taken out (nothing else
	 * removed), the mains hum series ('none'), or the IMD of the two tones.
	 */
	private measureWithoutTone(): void {
		const spec = this.spec;
		const cur = this.cur;
		const fit = this.fitter;
		const c = this.conditions;
		const ps = this.powerScale;
		const half = this.fftSize >>> 1;
		const reach = fit.subtractHalfWidth;
		const resid = this.resid;
		for (let v = V_H; v < this.nv; v++) cur[v] = NaN;
		cur[V_P1] = 0;
		cur[V_NU] = 0;
		cur[V_MNU] = 0;

		// DC (and, with no stimulus, the hum series jointly with it: their lobes may overlap DC's).
		const top = Math.min(
			half,
			reach + 1 + (c.stimulus === 'none' ? Math.ceil((HUM_ORDERS * c.mainsHz) / this.binHz + reach) : 0)
		);
		for (let j = 0; j <= top; j++) {
			resid[2 * j] = spec[2 * j];
			resid[2 * j + 1] = spec[2 * j + 1];
		}
		let dc: number;
		const mainsNu = c.mainsHz / this.binHz;
		let humCount = 0;
		if (c.stimulus === 'none' && mainsNu >= 2) {
			while (humCount < HUM_ORDERS && (humCount + 1) * mainsNu < half - 1) humCount++;
			dc = fit.fitHarmonics(resid, mainsNu, humCount, true, this.humA, this.humB, true);
			// Mains wanders by a fraction of a per cent; anything farther is the fit chasing noise.
			if (!(Math.abs(fit.nu - mainsNu) <= 0.01 * mainsNu)) {
				dc = fit.fitHarmonics(resid, mainsNu, humCount, true, this.humA, this.humB, false);
				fit.nu = mainsNu;
			}
			cur[V_MNU] = fit.nu;
			const base = V_H + c.maxHarmonic - 1;
			for (let h = 0; h < humCount; h++)
				cur[base + h] = (this.humA[h] * this.humA[h] + this.humB[h] * this.humB[h]) / 2;
		} else {
			dc = fit.fitDc(resid);
		}
		fit.subtractDc(resid, dc);
		cur[V_DC] = dc;

		// Total in band: bins near DC from the DC-free copy, the rest straight from the spectrum.
		const kLo = this.kLo;
		const kHi = this.kHi;
		const dcEnd = Math.min(kHi, reach + 1);
		let p = 0;
		let pa = 0;
		if (kLo <= dcEnd) {
			this.bandSum(resid, kLo, dcEnd);
			p += this.sumP;
			pa += this.sumPA;
		}
		const from = Math.max(kLo, dcEnd + 1);
		if (from <= kHi) {
			this.powerSum(from, kHi);
			p += this.sumP;
			pa += this.sumPA;
		}
		p *= ps;
		pa *= ps;
		cur[V_T] = p;
		cur[V_TA] = pa;
		cur[V_R] = p;
		cur[V_RA] = pa;
		cur[V_N] = p;
		cur[V_NA] = pa;

		this.lastImd = null;
		this.lastImdError = null;
		if (c.stimulus === 'smpte' || c.stimulus === 'twin-tone') {
			// The IMD fit subtracts the tones from its spectrum: work on a copy.
			for (let j = 0; j < 2 * (half + 1); j++) resid[j] = spec[j];
			try {
				const r = imdOnSpectrum(c.stimulus, resid, fit, this.fftSize, this.binHz, c.imdF1Hz, c.imdF2Hz);
				this.lastImd = r;
				// Noise under a two-tone stimulus: everything in band but the two tones.
				const [f1, f2] = [r.f1Hz, r.f2Hz];
				const t1 = r.level1Vrms * r.level1Vrms;
				const t2 = r.level2Vrms * r.level2Vrms;
				const inBand = (f: number) => f >= c.bandHz[0] && f <= c.bandHz[1];
				const tp = (inBand(f1) ? t1 : 0) + (inBand(f2) ? t2 : 0);
				const tpa =
					(inBand(f1) ? t1 * aWeightingPowerGain(f1) : 0) + (inBand(f2) ? t2 * aWeightingPowerGain(f2) : 0);
				cur[V_N] = Math.max(0, p - tp);
				cur[V_NA] = Math.max(0, pa - tpa);
			} catch (e) {
				this.lastImdError = e instanceof Error ? e.message : String(e);
			}
		}
	}

	private accumulate(): void {
		const nv = this.nv;
		const cur = this.cur;
		const avg = this.avg;
		this.frames++;
		if (this.averaging === 'power' && this.averages > 1) {
			const slot = this.ringPos;
			this.ring.set(cur, slot * nv);
			const used = Math.min(this.frames, this.averages);
			for (let v = 0; v < nv; v++) {
				let s = 0;
				for (let i = 0; i < used; i++) s += this.ring[i * nv + v];
				avg[v] = s / used;
			}
			if (this.wantSpectrum && this.binRing && this.binSum) {
				const bins = this.bins;
				const br = this.binRing;
				const bp = this.binPow;
				const bs = this.binSum;
				const base = slot * bins;
				if (slot === 0 && this.frames > this.averages) {
					// Re-sum exactly each time the ring wraps so add/subtract rounding cannot build up.
					br.set(bp, base);
					bs.fill(0);
					for (let i = 0; i < this.averages; i++) for (let k = 0; k < bins; k++) bs[k] += br[i * bins + k];
				} else {
					for (let k = 0; k < bins; k++) {
						bs[k] += bp[k] - br[base + k];
						br[base + k] = bp[k];
					}
				}
				const inv = 1 / used;
				const ba = this.binAvg;
				for (let k = 0; k < bins; k++) ba[k] = Math.max(0, bs[k] * inv);
			}
			this.ringPos = (slot + 1) % this.averages;
		} else if (this.averaging === 'exponential' && this.frames > 1) {
			const al = this.alpha;
			for (let v = 0; v < nv; v++) avg[v] += al * (cur[v] - avg[v]);
			if (this.wantSpectrum) {
				const bp = this.binPow;
				const ba = this.binAvg;
				for (let k = 0; k < this.bins; k++) {
					ba[k] += al * (bp[k] - ba[k]);
				}
			}
		} else {
			avg.set(cur);
			if (this.wantSpectrum) this.binAvg.set(this.binPow);
		}
		if (this.wantSpectrum) this.spectrumDirty = true;
	}

	/** Converts the averaged figures (sample units) to the result at `fs` volts full scale. */
	private fill(fs: number, channel: number): ChannelResult {
		const avg = this.avg;
		const out = this.result;
		const fs2 = fs * fs;
		const c = this.conditions;
		const p1 = avg[V_P1];
		out.channel = channel;
		out.stimulus = c.stimulus;
		out.dcVolts = avg[V_DC] * fs;
		out.totalVrms = Math.sqrt(avg[V_T] * fs2);
		const cl = out.clipping;
		cl.fullScaleSamples = this.clip.fullScaleSamples;
		cl.flatTopPercent = this.clip.flatTopPercent;
		cl.crestFactorDb = this.clip.crestFactorDb;
		cl.clipped = this.clip.clipped;
		cl.reason = this.clip.reason;
		out.hum.length = 0;
		out.imd = null;
		out.imdError = null;
		out.snDb = null;
		out.snWeightedDb = null;

		// Harmonics that would count in THD but fall above the band or Nyquist (THD is understated).
		const beyond = out.harmonicsBeyondBand;
		beyond.length = 0;
		const f0 = avg[V_NU] * this.binHz;
		if (c.stimulus === 'tone' && f0 > 0)
			for (let h = 2; h <= c.maxHarmonic; h++)
				if (h * f0 > c.bandHz[1] || h * f0 >= this.sampleRateHz / 2) beyond.push(h);

		// Is the tone a signal? It must stand toneMarginDb above the noise, and be the generator's tone.
		let reason: string | null = null;
		if (c.stimulus === 'none') reason = 'no stimulus: the generator is off';
		else if (c.stimulus === 'smpte' || c.stimulus === 'twin-tone') reason = null;
		else {
			const snr = db10(p1 / avg[V_N]);
			const exp = c.expectedFrequencyHz;
			if (!(p1 > 0) || snr < c.toneMarginDb)
				reason = `no tone stands ${c.toneMarginDb} dB above the noise (strongest: ${snr.toFixed(1)} dB)`;
			else if (exp !== null && Math.abs(f0 - exp) > Math.max(2 * this.binHz, 0.01 * exp))
				reason = `the strongest tone is at ${f0.toFixed(1)} Hz, not the ${exp} Hz stimulus (hum or oscillation?)`;
		}
		const tone = c.stimulus === 'tone' && reason === null;
		out.signal = tone || ((c.stimulus === 'smpte' || c.stimulus === 'twin-tone') && this.lastImd !== null);
		if (!out.signal && reason === null) reason = this.lastImdError ?? 'the two tones were not found';
		out.signalReason = out.signal ? null : reason;

		if (!tone) {
			// Nothing is a fundamental: level and noise are the total in band (nothing removed, DC excluded).
			out.frequencyHz = null;
			out.levelVrms = out.totalVrms;
			out.levelDbv = db20(out.levelVrms);
			out.levelDbu = out.levelVrms > 0 ? Math.max(MIN_DB, vrmsToDbu(out.levelVrms)) : MIN_DB;
			out.levelDbfs = db10(avg[V_T] / 0.5);
			delete out.powerW;
			if (c.referenceVrms !== null) out.gainDb = null;
			else delete out.gainDb;
			out.harmonics.length = 0;
			out.thdPercent = null;
			out.thdDb = null;
			out.thdnPercent = null;
			out.thdnDb = null;
			out.snrDb = null;
			out.snrWeightedDb = null;
			out.sinadDb = null;
			out.enob = null;
			beyond.length = 0;
			// The tone path leaves the fundamental in V_T: with no signal, the noise is that total.
			const n = c.stimulus === 'tone' ? avg[V_T] : avg[V_N];
			const na = c.stimulus === 'tone' ? avg[V_TA] : avg[V_NA];
			out.noiseVrms = Math.sqrt(n * fs2);
			out.noiseDbv = db20(out.noiseVrms);
			out.noiseWeightedVrms = Math.sqrt(na * fs2);
			out.noiseWeightedDbv = db20(out.noiseWeightedVrms);
			if (c.stimulus === 'none') {
				if (c.snReference) {
					out.snDb = db20(c.snReference.vrms / out.noiseVrms);
					out.snWeightedDb = db20(c.snReference.vrms / out.noiseWeightedVrms);
				}
				const base = V_H + c.maxHarmonic - 1;
				const mf = avg[V_MNU] * this.binHz;
				for (let h = 1; h <= HUM_ORDERS; h++) {
					const ph = avg[base + h - 1];
					if (!Number.isFinite(ph)) continue;
					const f = h * mf;
					const v = Math.sqrt(ph) * fs;
					const item: HumComponent = {
						order: h,
						frequencyHz: f,
						levelVrms: v,
						levelDbv: db20(v),
						inBand: f >= c.bandHz[0] && f <= c.bandHz[1]
					};
					out.hum.push(item);
				}
			}
			if (this.lastImd) out.imd = scaleImd(this.lastImd, fs);
			else if (c.stimulus === 'smpte' || c.stimulus === 'twin-tone') out.imdError = reason;
			return out;
		}

		out.frequencyHz = f0;
		out.levelVrms = Math.sqrt(p1) * fs;
		out.levelDbv = db20(out.levelVrms);
		out.levelDbu = out.levelVrms > 0 ? Math.max(MIN_DB, vrmsToDbu(out.levelVrms)) : MIN_DB;
		out.levelDbfs = db10(p1 / 0.5);
		if (c.loadOhms !== null) out.powerW = wattsIntoLoad(out.levelVrms, c.loadOhms);
		else delete out.powerW;
		if (c.referenceVrms !== null) out.gainDb = db20(out.levelVrms / c.referenceVrms);
		else delete out.gainDb;

		const hs = out.harmonics;
		let hsum = 0;
		let count = 0;
		for (let h = 2; h <= c.maxHarmonic; h++) {
			const ph = avg[V_H + h - 2];
			if (!Number.isFinite(ph)) continue;
			hsum += ph;
			let item = hs[count];
			if (!item) {
				item = { order: 0, frequencyHz: 0, levelDbc: 0, levelVrms: 0 };
				hs.push(item);
			}
			item.order = h;
			item.frequencyHz = h * f0;
			item.levelDbc = db10(ph / p1);
			item.levelVrms = Math.sqrt(ph) * fs;
			count++;
		}
		hs.length = count;
		const thd = p1 > 0 ? Math.sqrt(hsum / p1) : 0;
		out.thdPercent = thd * 100;
		out.thdDb = db20(thd);
		const weighted = c.weighting === 'a';
		const r = weighted ? avg[V_RA] : avg[V_R];
		const t = weighted ? avg[V_TA] : avg[V_T];
		const thdn = t > 0 ? Math.sqrt(r / t) : 0;
		out.thdnPercent = thdn * 100;
		out.thdnDb = db20(thdn);
		out.noiseVrms = Math.sqrt(avg[V_N] * fs2);
		out.noiseDbv = db20(out.noiseVrms);
		out.snrDb = db10(p1 / avg[V_N]);
		out.noiseWeightedVrms = Math.sqrt(avg[V_NA] * fs2);
		out.noiseWeightedDbv = db20(out.noiseWeightedVrms);
		out.snrWeightedDb = db10(p1 / avg[V_NA]);
		out.sinadDb = db10(p1 / avg[V_R]);
		out.enob = (out.sinadDb - 1.76) / 6.02;
		return out;
	}
}

/** An IMD result measured in sample units, in volts at `fs` volts full scale (ratios unchanged). */
function scaleImd(r: ImdResult, fs: number): ImdResult {
	return {
		...r,
		level1Vrms: r.level1Vrms * fs,
		level2Vrms: r.level2Vrms * fs,
		products: r.products.map((q) => ({ ...q, levelVrms: q.levelVrms * fs }))
	};
}

function cloneResult(r: ChannelResult): ChannelResult {
	return {
		...r,
		harmonics: r.harmonics.map((h) => ({ ...h })),
		harmonicsBeyondBand: [...r.harmonicsBeyondBand],
		hum: r.hum.map((h) => ({ ...h })),
		clipping: { ...r.clipping },
		imd: r.imd ? { ...r.imd, products: r.imd.products.map((q) => ({ ...q })) } : null
	};
}

/** Analysis of one channel's samples: `averages` consecutive frames of fftSize from the start, power-averaged. */
export function analyzeChannel(
	samples: Float32Array,
	sampleRateHz: number,
	fullScaleVolts: number,
	options: AnalysisOptions = {},
	channel = 0
): ChannelResult {
	const { result } = analyzeOne(samples, sampleRateHz, fullScaleVolts, options, channel);
	return result;
}

function analyzeOne(
	samples: Float32Array,
	sampleRateHz: number,
	fullScaleVolts: number,
	options: AnalysisOptions,
	channel: number
): { result: ChannelResult; analyzer: Analyzer; frames: number } {
	const fftSize = options.fftSize ?? defaultFftSize(samples.length);
	if (samples.length < fftSize)
		throw new RangeError(`need at least ${fftSize} samples for FFT size ${fftSize}, got ${samples.length}`);
	const wanted = Math.max(1, Math.floor(options.averages ?? 1));
	const frames = Math.max(1, Math.min(wanted, Math.floor(samples.length / fftSize)));
	const analyzerOptions: AnalyzerOptions = {
		window: options.window,
		bandHz: options.bandHz,
		weighting: options.weighting,
		loadOhms: options.loadOhms,
		referenceVrms: options.referenceVrms,
		maxHarmonic: options.maxHarmonic,
		stimulus: options.stimulus,
		mainsHz: options.mainsHz,
		toneMarginDb: options.toneMarginDb,
		expectedFrequencyHz: options.expectedFrequencyHz,
		imdF1Hz: options.imdF1Hz,
		imdF2Hz: options.imdF2Hz,
		snReference: options.snReference,
		averages: frames,
		averaging: frames > 1 ? 'power' : 'none',
		spectrum: false
	};
	// One-shot calls (server, CLI) reuse a few analysers rather than allocate megabytes of buffers each time.
	const key = `${channel}|${fftSize}|${sampleRateHz}|${JSON.stringify(analyzerOptions)}`;
	const analyzer = cached(oneShotCache, key, () => new Analyzer(fftSize, sampleRateHz, analyzerOptions), 4);
	analyzer.reset();
	let r: ChannelResult | undefined;
	for (let i = 0; i < frames; i++)
		r = analyzer.analyze(samples.subarray(i * fftSize, (i + 1) * fftSize), fullScaleVolts, channel);
	return { result: cloneResult(r as ChannelResult), analyzer, frames };
}

/** Level (V rms) of the component at exactly `frequencyHz` in `samples` (first fftSize samples). */
export function toneLevelAt(
	samples: Float32Array,
	sampleRateHz: number,
	frequencyHz: number,
	fullScaleVolts = 1,
	fftSize = defaultFftSize(samples.length)
): number {
	const n = fftSize;
	if (samples.length < n) throw new RangeError(`need ${n} samples, got ${samples.length}`);
	const fft = sharedFft(n);
	const w = sharedWindow(ANALYSIS_WINDOW, n);
	const frame = new Float64Array(n);
	for (let i = 0; i < n; i++) frame[i] = samples[i] * w[i];
	const spec = new Float64Array(2 * n);
	fft.realTransform(spec, frame);
	const fit = new ToneFitter(n, ANALYSIS_WINDOW);
	fit.fitFixed(spec, (frequencyHz * n) / sampleRateHz, false);
	return (fit.amplitude * fullScaleVolts) / Math.SQRT2;
}

/**
 * Crosstalk from a driven channel into an undriven one: the level of the driven channel's fundamental
 * found in `other`, relative to the driven level, dB.
 */
export function crosstalkDb(
	driven: Float32Array,
	other: Float32Array,
	sampleRateHz: number,
	fullScaleVolts: number | [number, number] = 1,
	options: AnalysisOptions = {}
): number {
	const [fsDriven, fsOther] = Array.isArray(fullScaleVolts)
		? fullScaleVolts
		: [fullScaleVolts, fullScaleVolts];
	const fftSize = options.fftSize ?? defaultFftSize(Math.min(driven.length, other.length));
	const d = analyzeChannel(driven, sampleRateHz, fsDriven, { ...options, fftSize, averages: 1 });
	if (d.frequencyHz === null) throw new RangeError(`no tone in the driven channel: ${d.signalReason}`);
	return db20(toneLevelAt(other, sampleRateHz, d.frequencyHz, fsOther, fftSize) / d.levelVrms);
}

/** Channel balance: level of `a` relative to `b`, dB. */
export function channelBalanceDb(
	a: Pick<ChannelResult, 'levelVrms'>,
	b: Pick<ChannelResult, 'levelVrms'>
): number {
	return db20(a.levelVrms / b.levelVrms);
}

/** Channels 0 and 1 must differ by at least this much for crosstalk to be reported. */
export const CROSSTALK_MIN_BALANCE_DB = 10;

export interface StereoFigures {
	/** Level of the first channel relative to the second, dB. */
	balanceDb: number;
	/**
	 * Level at the louder channel's frequency in the quieter channel, relative to the louder (dB);
	 * only when the channels differ by CROSSTALK_MIN_BALANCE_DB or more (one driven, one not).
	 */
	crosstalkDb?: number;
	crosstalkFromChannel?: number;
	crosstalkToChannel?: number;
}

/**
 * Balance and crosstalk of two analysed channels: the one rule the live worker and the server
 * (analyzeFrames) share, so a live verdict and a stored verdict read the same figure. Each
 * analyser must just have produced its result (crosstalk fits the louder channel's frequency in
 * the quieter channel's newest frame).
 */
export function stereoFigures(
	a: { result: ChannelResult; analyzer: Analyzer },
	b: { result: ChannelResult; analyzer: Analyzer }
): StereoFigures {
	const out: StereoFigures = { balanceDb: channelBalanceDb(a.result, b.result) };
	// With both channels driven the "quieter" one is just the other signal, not leakage.
	if (Math.abs(out.balanceDb) >= CROSSTALK_MIN_BALANCE_DB) {
		const [from, to] = a.result.levelVrms >= b.result.levelVrms ? [a, b] : [b, a];
		// Crosstalk needs a tone in the driven channel; without one there is nothing to follow.
		if (from.result.frequencyHz === null) return out;
		const otherVrms = to.analyzer.toneVrmsAt(from.result.frequencyHz);
		out.crosstalkDb = db20(otherVrms / from.result.levelVrms);
		out.crosstalkFromChannel = from.result.channel;
		out.crosstalkToChannel = to.result.channel;
	}
	return out;
}

/** Analysis of every channel of a frame set, with balance and crosstalk for two or more channels. */
export function analyzeFrames(
	channels: Float32Array[],
	sampleRateHz: number,
	fullScaleVolts: number | number[],
	options: AnalysisOptions = {}
): AnalysisResult {
	if (channels.length === 0) throw new RangeError('no channels to analyse');
	const minLen = Math.min(...channels.map((c) => c.length));
	const fftSize = options.fftSize ?? defaultFftSize(minLen);
	const fsv = channels.map((_, i) =>
		Array.isArray(fullScaleVolts) ? (fullScaleVolts[i] ?? fullScaleVolts[0] ?? 1) : fullScaleVolts
	);
	const runs = channels.map((c, i) => analyzeOne(c, sampleRateHz, fsv[i], { ...options, fftSize }, i));
	const results = runs.map((r) => r.result);
	const frames = runs[0].frames;
	const rc = runs[0].analyzer.conditions;
	const out: AnalysisResult = {
		sampleRateHz,
		conditions: {
			window: rc.window,
			analysisWindow: ANALYSIS_WINDOW,
			method: 'sine-fit-residual',
			fftSize,
			averages: frames,
			bandHz: rc.bandHz,
			weighting: rc.weighting,
			loadOhms: rc.loadOhms,
			referenceVrms: rc.referenceVrms,
			fullScaleVolts: fsv,
			binHz: sampleRateHz / fftSize,
			maxHarmonic: rc.maxHarmonic,
			thdReference: 'fundamental',
			thdnReference: 'total-in-band',
			stimulus: rc.stimulus,
			mainsHz: rc.mainsHz,
			toneMarginDb: rc.toneMarginDb,
			expectedFrequencyHz: rc.expectedFrequencyHz,
			snReference: rc.snReference
		},
		channels: results
	};
	if (results.length >= 2) Object.assign(out, stereoFigures(runs[0], runs[1]));
	return out;
}
