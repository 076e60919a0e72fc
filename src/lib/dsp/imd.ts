// Intermodulation distortion from two-tone signals (REFERENCES.md §7), measured with the same tone fit
// as the analyser: both tones are fitted and removed, then each product is fitted at its exact frequency.
//
// Conventions fixed here (and checked in imd.test.ts):
// - SMPTE (RP120 tones 60 Hz + 7 kHz, 4:1): d2 = (U(f2−f1) + U(f2+f1))/U(f2), d3 = (U(f2−2f1) + U(f2+2f1))/U(f2);
//   sidebands add linearly within an order, orders combine as rss: IMD = √(d2² + d3²) (IEC 60268-3 style,
//   relative to the HF tone). The classic envelope-demodulation reading is about 1/√2 of this.
// - Twin-tone / difference frequency (19 + 20 kHz, 1:1): d2 = U(f2−f1)/(U1 + U2),
//   d3 = (U(2f1−f2) + U(2f2−f1))/(U1 + U2), IMD = √(d2² + d3²), relative to the sum of the tone amplitudes.

import FFT from 'fft.js';
import { ANALYSIS_WINDOW, makeWindow, windows } from './windows';
import { ToneFitter, interpolatePeak, peakBin } from './tonefit';
import { db20, defaultFftSize } from './analyzer';
import type { Spectrum } from './tonefit';

export interface ImdProduct {
	label: string;
	order: 2 | 3;
	frequencyHz: number;
	levelVrms: number;
	/** Relative to the reference (HF tone for SMPTE, U1 + U2 for twin-tone), dB. */
	levelDbr: number;
}

export interface ImdResult {
	method: 'smpte' | 'twin-tone';
	reference: 'hf-tone' | 'sum-of-tones';
	f1Hz: number;
	f2Hz: number;
	level1Vrms: number;
	level2Vrms: number;
	d2Percent: number;
	d3Percent: number;
	imdPercent: number;
	imdDb: number;
	products: ImdProduct[];
	fftSize: number;
}

export interface ImdOptions {
	f1Hz?: number;
	f2Hz?: number;
	fftSize?: number;
	fullScaleVolts?: number;
}

interface Prepared {
	fit: ToneFitter;
	spec: Float64Array;
	binHz: number;
	n: number;
}

function checkSpacing(n: number, binHz: number, minSpacingHz: number): void {
	const needBins = 2 * windows[ANALYSIS_WINDOW].mainlobeHalfWidthBins + 1;
	if (minSpacingHz / binHz < needBins) {
		const minN = 2 ** Math.ceil(Math.log2((needBins * binHz * n) / minSpacingHz));
		throw new RangeError(`IMD products ${minSpacingHz} Hz apart need an FFT of at least ${minN} samples`);
	}
}

function prepare(
	samples: Float32Array,
	sampleRateHz: number,
	fftSize: number,
	minSpacingHz: number
): Prepared {
	const n = fftSize;
	if (samples.length < n) throw new RangeError(`need ${n} samples, got ${samples.length}`);
	const binHz = sampleRateHz / n;
	checkSpacing(n, binHz, minSpacingHz);
	const w = makeWindow(ANALYSIS_WINDOW, n);
	const frame = new Float64Array(n);
	for (let i = 0; i < n; i++) frame[i] = samples[i] * w[i];
	const spec = new Float64Array(2 * n);
	new FFT(n).realTransform(spec, frame);
	return { fit: new ToneFitter(n, ANALYSIS_WINDOW), spec, binHz, n };
}

/** Fits and removes the tone nearest `nominalHz`; returns [frequency Hz, amplitude]. */
function takeTone(p: Prepared, nominalHz: number): [number, number] {
	const half = p.n / 2;
	const c = nominalHz / p.binHz;
	const span = Math.max(3, c * 0.02);
	const k = peakBin(p.spec, Math.max(1, Math.floor(c - span)), Math.min(half - 1, Math.ceil(c + span)));
	p.fit.fitFree(p.spec, interpolatePeak(p.spec, k, half), c < 20);
	const r: [number, number] = [p.fit.nu * p.binHz, p.fit.amplitude];
	p.fit.subtract(p.spec);
	return r;
}

function productAmp(p: Prepared, fHz: number): number {
	const nu = fHz / p.binHz;
	if (nu <= 0 || nu >= p.n / 2) return 0;
	p.fit.fitFixed(p.spec, nu, false);
	return p.fit.amplitude;
}

/** The products each method reads, in a fixed order (the order a saved procedure lists them in). */
export function imdProducts(
	method: 'smpte' | 'twin-tone',
	f1Hz: number,
	f2Hz: number
): { label: string; order: 2 | 3; frequencyHz: number }[] {
	if (method === 'smpte')
		return [
			{ label: 'f2 − f1', order: 2, frequencyHz: f2Hz - f1Hz },
			{ label: 'f2 + f1', order: 2, frequencyHz: f2Hz + f1Hz },
			{ label: 'f2 − 2f1', order: 3, frequencyHz: f2Hz - 2 * f1Hz },
			{ label: 'f2 + 2f1', order: 3, frequencyHz: f2Hz + 2 * f1Hz }
		];
	return [
		{ label: 'f2 − f1', order: 2, frequencyHz: f2Hz - f1Hz },
		{ label: '2f1 − f2', order: 3, frequencyHz: 2 * f1Hz - f2Hz },
		{ label: '2f2 − f1', order: 3, frequencyHz: 2 * f2Hz - f1Hz }
	];
}

/**
 * The figures from tone and product amplitudes (any one unit), with the conventions above:
 * sidebands add within an order, orders combine as rss; SMPTE re the HF tone (u2), twin-tone re u1 + u2.
 * `productAmps` follows imdProducts' order.
 */
export function imdFigures(
	method: 'smpte' | 'twin-tone',
	u1: number,
	u2: number,
	productAmps: readonly number[]
): { reference: number; d2: number; d3: number; imd: number } {
	const orders = imdProducts(method, 0, 0).map((q) => q.order);
	if (productAmps.length !== orders.length)
		throw new RangeError(`${method} IMD reads ${orders.length} products, got ${productAmps.length}`);
	const reference = method === 'smpte' ? u2 : u1 + u2;
	const d2 = productAmps.reduce((s, u, i) => s + (orders[i] === 2 ? u : 0), 0) / reference;
	const d3 = productAmps.reduce((s, u, i) => s + (orders[i] === 3 ? u : 0), 0) / reference;
	return { reference, d2, d3, imd: Math.hypot(d2, d3) };
}

function finish(
	method: ImdResult['method'],
	f1: number,
	f2: number,
	u1: number,
	u2: number,
	p: Prepared,
	fs: number,
	fftSize: number
): ImdResult {
	const prods = imdProducts(method, f1, f2).map((q) => ({ ...q, u: productAmp(p, q.frequencyHz) }));
	const {
		reference: ref,
		d2,
		d3,
		imd
	} = imdFigures(
		method,
		u1,
		u2,
		prods.map((q) => q.u)
	);
	return {
		method,
		reference: method === 'smpte' ? 'hf-tone' : 'sum-of-tones',
		f1Hz: f1,
		f2Hz: f2,
		level1Vrms: (u1 * fs) / Math.SQRT2,
		level2Vrms: (u2 * fs) / Math.SQRT2,
		d2Percent: d2 * 100,
		d3Percent: d3 * 100,
		imdPercent: imd * 100,
		imdDb: db20(imd),
		products: prods.map((q) => ({
			label: q.label,
			order: q.order,
			frequencyHz: q.frequencyHz,
			levelVrms: (q.u * fs) / Math.SQRT2,
			levelDbr: db20(q.u / ref)
		})),
		fftSize
	};
}

/**
 * IMD from an analysis-window spectrum the caller already has (the live analyser): `spec` is changed
 * (the tones are subtracted), so pass a copy. Levels are in sample units (full scale 1).
 */
export function imdOnSpectrum(
	method: 'smpte' | 'twin-tone',
	spec: Spectrum,
	fit: ToneFitter,
	n: number,
	binHz: number,
	f1Hz: number | null = null,
	f2Hz: number | null = null
): ImdResult {
	const p: Prepared = { fit, spec, binHz, n };
	if (method === 'smpte') {
		const f1n = f1Hz ?? 60;
		const f2n = f2Hz ?? 7000;
		if (f2n >= (n / 2) * binHz) throw new RangeError(`the ${f2n} Hz tone is above Nyquist`);
		checkSpacing(n, binHz, f1n);
		return smpteOn(p, f1n, f2n, 1, n);
	}
	const f1n = f1Hz ?? 19000;
	const f2n = f2Hz ?? 20000;
	if (Math.max(f1n, f2n) >= (n / 2) * binHz)
		throw new RangeError(`the ${Math.max(f1n, f2n)} Hz tone is above Nyquist`);
	checkSpacing(n, binHz, Math.abs(f2n - f1n));
	return twinOn(p, f1n, f2n, 1, n);
}

function smpteOn(p: Prepared, f1n: number, f2n: number, fs: number, fftSize: number): ImdResult {
	const [f1, u1] = takeTone(p, f1n);
	const [f2, u2] = takeTone(p, f2n);
	return finish('smpte', f1, f2, u1, u2, p, fs, fftSize);
}

function twinOn(p: Prepared, f1n: number, f2n: number, fs: number, fftSize: number): ImdResult {
	const [f1, u1] = takeTone(p, f1n);
	const [f2, u2] = takeTone(p, f2n);
	return finish('twin-tone', f1, f2, u1, u2, p, fs, fftSize);
}

/** SMPTE IMD: LF tone f1 (60 Hz) and HF tone f2 (7 kHz) at 4:1. */
export function smpteImd(samples: Float32Array, sampleRateHz: number, options: ImdOptions = {}): ImdResult {
	const f1n = options.f1Hz ?? 60;
	const f2n = options.f2Hz ?? 7000;
	const fftSize = options.fftSize ?? defaultFftSize(samples.length);
	const p = prepare(samples, sampleRateHz, fftSize, f1n);
	return smpteOn(p, f1n, f2n, options.fullScaleVolts ?? 1, fftSize);
}

/** Twin-tone (difference-frequency) IMD: equal tones f1 and f2 (19 + 20 kHz). */
export function twinToneImd(
	samples: Float32Array,
	sampleRateHz: number,
	options: ImdOptions = {}
): ImdResult {
	const f1n = options.f1Hz ?? 19000;
	const f2n = options.f2Hz ?? 20000;
	const fftSize = options.fftSize ?? defaultFftSize(samples.length);
	const p = prepare(samples, sampleRateHz, fftSize, Math.abs(f2n - f1n));
	return twinOn(p, f1n, f2n, options.fullScaleVolts ?? 1, fftSize);
}
