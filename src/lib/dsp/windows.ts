// FFT windows as periodic cosine sums, their published figures, and the exact windowed
// spectrum of a complex exponential (the kernel the sine fit uses to model a tone).

export type WindowName = 'hann' | 'blackman-harris-4' | 'flat-top' | 'blackman-harris-7';

export interface WindowInfo {
	name: WindowName;
	label: string;
	/** Signed cosine-sum coefficients: w[n] = Σ c_k·cos(2πkn/N), n = 0…N−1 (periodic form). */
	coefficients: readonly number[];
	/** Coherent gain Σw/(N·max w). */
	coherentGain: number;
	/** Equivalent noise bandwidth N·Σw²/(Σw)², in bins. */
	enbwBins: number;
	/** Amplitude loss for a tone half a bin off centre, dB (positive number). */
	scallopLossDb: number;
	/** Highest side lobe relative to the main lobe peak, dB. */
	highestSidelobeDb: number;
	/** Half width of the main lobe in bins (first null): the number of cosine terms. */
	mainlobeHalfWidthBins: number;
	source: string;
}

function cosineSumFigures(c: readonly number[]): { coherentGain: number; enbwBins: number; peak: number } {
	// Exact for the periodic form whenever N > 2·(terms − 1): the cross terms sum to zero.
	const peak = c.reduce((s, v) => s + Math.abs(v), 0);
	let sq = c[0] * c[0];
	for (let k = 1; k < c.length; k++) sq += (c[k] * c[k]) / 2;
	return { coherentGain: c[0] / peak, enbwBins: sq / (c[0] * c[0]), peak };
}

function defineWindow(
	name: WindowName,
	label: string,
	coefficients: number[],
	scallopLossDb: number,
	highestSidelobeDb: number,
	source: string
): WindowInfo {
	const f = cosineSumFigures(coefficients);
	return {
		name,
		label,
		coefficients,
		coherentGain: f.coherentGain,
		enbwBins: f.enbwBins,
		scallopLossDb,
		highestSidelobeDb,
		mainlobeHalfWidthBins: coefficients.length,
		source
	};
}

/**
 * Coefficients from the sources named; CG and ENBW are computed exactly from them,
 * scallop loss and highest side lobe are the published figures (checked in windows.test.ts).
 */
export const windows: Readonly<Record<WindowName, WindowInfo>> = {
	hann: defineWindow('hann', 'Hann', [0.5, -0.5], 1.42, -31.5, 'Harris 1978 Table 1; Heinzel et al. 2002'),
	'blackman-harris-4': defineWindow(
		'blackman-harris-4',
		'Blackman-Harris 4-term (−92 dB)',
		[0.35875, -0.48829, 0.14128, -0.01168],
		0.83,
		-92.0,
		'Harris 1978 Table 1'
	),
	'flat-top': defineWindow(
		'flat-top',
		'Flat-top HFT95',
		// Heinzel's HFT95 is normalised with c0 = 1; peak Σ|c| = 4.6808.
		[1, -1.9383379, 1.3045202, -0.402827, 0.0350665],
		0.0039,
		-95.0,
		'Heinzel, Rüdiger & Schilling 2002, HFT95'
	),
	'blackman-harris-7': defineWindow(
		'blackman-harris-7',
		'Blackman-Harris 7-term (high dynamic range)',
		[
			0.27105140069342, -0.43329793923448, 0.21812299954311, -0.06592544638803, 0.01081174209837,
			-0.00077658482522, 0.00001388721735
		],
		0.48,
		-180,
		'Albrecht 2001, 7-term minimum-side-lobe cosine sum'
	)
};

export const WINDOW_NAMES = Object.keys(windows) as WindowName[];

/** The window the residual (THD+N, noise) and tone fits always use: side lobes below −170 dB. */
export const ANALYSIS_WINDOW: WindowName = 'blackman-harris-7';

export function isWindowName(v: string): v is WindowName {
	return Object.prototype.hasOwnProperty.call(windows, v);
}

/** Periodic window of length N, scaled so that its maximum is Σ|c_k| as defined by the coefficients. */
export function makeWindow(name: WindowName, n: number, out = new Float64Array(n)): Float64Array {
	const c = windows[name].coefficients;
	for (let i = 0; i < n; i++) {
		let v = c[0];
		for (let k = 1; k < c.length; k++) v += c[k] * Math.cos((2 * Math.PI * k * i) / n);
		out[i] = v;
	}
	return out;
}

/**
 * Exact windowed DFT of e^{j2πνn/N} seen at bin 0, i.e. K(k − ν) is what bin k holds for a unit
 * complex exponential at ν bins. Evaluated in closed form from the Dirichlet kernel so a tone can be
 * modelled to double precision at any fractional frequency.
 */
export class WindowKernel {
	readonly n: number;
	private readonly half: Float64Array; // c_k/2 for k ≥ 1 and c_0 at index 0
	private readonly rotRe: Float64Array; // cos(πk/N)
	private readonly rotIm: Float64Array; // sin(πk/N)
	readonly terms: number;

	constructor(name: WindowName, n: number) {
		const c = windows[name].coefficients;
		this.n = n;
		this.terms = c.length;
		this.half = new Float64Array(c.length);
		this.rotRe = new Float64Array(c.length);
		this.rotIm = new Float64Array(c.length);
		for (let k = 0; k < c.length; k++) {
			this.half[k] = k === 0 ? c[0] : c[k] / 2;
			this.rotRe[k] = Math.cos((Math.PI * k) / n);
			this.rotIm[k] = Math.sin((Math.PI * k) / n);
		}
	}

	/**
	 * K(u) written into out[o] (re) and out[o+1] (im).
	 * D(u) = Σ_n e^{−j2πun/N} = e^{−jπu(N−1)/N}·sin(πu)/sin(πu/N); the terms D(u∓m) share sin(πu) and the
	 * phase, differing only by e^{∓jπm/N}/sin(π(u∓m)/N), and that sine comes from the angle-difference
	 * identity, so one evaluation costs five trigonometric calls whatever the number of terms.
	 */
	eval(u: number, out: Float64Array, o: number): void {
		const n = this.n;
		// D is N-periodic; reducing u into [−N/2, N/2] keeps every argument small.
		const r = u - n * Math.round(u / n);
		const ri = Math.round(r);
		const eps = r - ri;
		// sin(πr) from the fractional part keeps full relative precision near the nulls.
		const sPi = (ri & 1 ? -1 : 1) * Math.sin(Math.PI * eps);
		const ph = (-Math.PI * r * (n - 1)) / n;
		const pr = Math.cos(ph);
		const pi = Math.sin(ph);
		const sr = Math.sin((Math.PI * r) / n);
		const cr = Math.cos((Math.PI * r) / n);
		let accRe = 0;
		let accIm = 0;
		const terms = this.terms;
		for (let m = -(terms - 1); m < terms; m++) {
			const am = m < 0 ? -m : m;
			const coef = this.half[am];
			const v = r - m;
			if (Math.abs(v) < 1e-6) {
				// At (or within 1e-6 bin of) the term's own peak: D → N·e^{−jπv(N−1)/N} without 0/0.
				const p2 = (-Math.PI * v * (n - 1)) / n;
				const s = n * (1 - (Math.PI * Math.PI * v * v * (1 - 1 / (n * n))) / 6);
				accRe += coef * s * Math.cos(p2);
				accIm += coef * s * Math.sin(p2);
				continue;
			}
			const c = this.rotRe[am];
			const sm = m < 0 ? -this.rotIm[am] : this.rotIm[am]; // sin(πm/N)
			const den = sr * c - cr * sm; // sin(π(r − m)/N)
			const g = (coef * sPi) / den;
			// × e^{−jπm/N} = c − j·sm, then × the common phase.
			const tRe = g * c;
			const tIm = -g * sm;
			accRe += tRe * pr - tIm * pi;
			accIm += tRe * pi + tIm * pr;
		}
		out[o] = accRe;
		out[o + 1] = accIm;
	}
}
