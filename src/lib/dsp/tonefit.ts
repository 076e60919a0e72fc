// Least-squares fit of sine tones to a windowed spectrum (IEEE 1057/1241 3- and 4-parameter fits,
// done on the main-lobe bins with the window's exact kernel), and subtraction of the fitted tone.
//
// Why in the frequency domain: with the 7-term window a tone's energy beyond ±7 bins is below
// −180 dB, so the whole tone is described by ~15 complex bins. Fitting and removing it there costs a
// few hundred kernel evaluations instead of passes over every sample, and it needs no second FFT.

import { WindowKernel, windows, type WindowName } from './windows';

/** Interleaved complex spectrum [re0, im0, re1, im1, …] holding at least bins 0…N/2. */
export type Spectrum = Float64Array;

/** Solves the n×n system A·x = b in place (Gaussian elimination, partial pivoting). Returns false if singular. */
function solve(a: Float64Array, b: Float64Array, n: number): boolean {
	for (let col = 0; col < n; col++) {
		let piv = col;
		let best = Math.abs(a[col * n + col]);
		for (let r = col + 1; r < n; r++) {
			const v = Math.abs(a[r * n + col]);
			if (v > best) {
				best = v;
				piv = r;
			}
		}
		if (!(best > 0)) return false;
		if (piv !== col) {
			for (let c = 0; c < n; c++) {
				const t = a[col * n + c];
				a[col * n + c] = a[piv * n + c];
				a[piv * n + c] = t;
			}
			const t = b[col];
			b[col] = b[piv];
			b[piv] = t;
		}
		const d = a[col * n + col];
		for (let r = col + 1; r < n; r++) {
			const f = a[r * n + col] / d;
			if (f === 0) continue;
			for (let c = col; c < n; c++) a[r * n + c] -= f * a[col * n + c];
			b[r] -= f * b[col];
		}
	}
	for (let r = n - 1; r >= 0; r--) {
		let s = b[r];
		for (let c = r + 1; c < n; c++) s -= a[r * n + c] * b[c];
		b[r] = s / a[r * n + r];
	}
	return true;
}

export class ToneFitter {
	readonly n: number;
	readonly halfBins: number;
	/** Half width (bins) of the fit region: the window's main lobe. */
	readonly fitHalfWidth: number;
	/** Half width (bins) over which a fitted tone is subtracted. */
	readonly subtractHalfWidth: number;
	private readonly kernel: WindowKernel;
	private readonly kv = new Float64Array(2);
	private readonly colv = new Float64Array(8); // Cc re/im, Cs re/im, Cd re/im, ∂/∂ν re/im
	private readonly ata = new Float64Array(16);
	private readonly atb = new Float64Array(4);
	private readonly dcol = new Float64Array(4);

	// Results of the last fit: x(n) ≈ a·cos(2πνn/N) + b·sin(2πνn/N) + dc, in sample units.
	a = 0;
	b = 0;
	nu = 0;
	dc = 0;

	// Joint-fit scratch, sized for `maxTones` tones plus DC and the frequency.
	private readonly maxTones: number;
	private readonly jAta: Float64Array;
	private readonly jAtb: Float64Array;
	private readonly jCol: Float64Array;
	private readonly jIdx: Int32Array;

	constructor(n: number, window: WindowName, maxTones = 16) {
		this.n = n;
		this.halfBins = n >>> 1;
		this.kernel = new WindowKernel(window, n);
		this.fitHalfWidth = windows[window].mainlobeHalfWidthBins;
		this.subtractHalfWidth = this.fitHalfWidth + 3;
		this.maxTones = maxTones;
		const p = 2 * maxTones + 2; // cos and sin per tone, DC, and ν
		this.jAta = new Float64Array(p * p);
		this.jAtb = new Float64Array(p);
		this.jCol = new Float64Array(2 * p);
		this.jIdx = new Int32Array(p);
	}

	/**
	 * Multi-harmonic sine fit (the IEEE 1057 fit extended to a harmonic series) for a fundamental whose
	 * harmonics' main lobes overlap: tones at h·ν for h = 1…count and optionally DC, amplitudes by joint
	 * least squares, and — with `refine` — ν by Gauss-Newton on the whole series. Writes
	 * x ≈ Σ A_h·cos + B_h·sin into outA/outB (index h − 1), sets `nu`, and returns the DC.
	 */
	fitHarmonics(
		spec: Spectrum,
		nuStart: number,
		count: number,
		withDc: boolean,
		outA: Float64Array,
		outB: Float64Array,
		refine = true
	): number {
		if (count > this.maxTones) throw new RangeError(`joint fit of ${count} tones exceeds ${this.maxTones}`);
		let nu = nuStart;
		let dc = this.jointStep(spec, nu, count, withDc, outA, outB, 0, false);
		for (let it = 0; refine && it < 12; it++) {
			let step = this.jointStep(spec, nu, count, withDc, outA, outB, dc, true);
			if (!Number.isFinite(step)) break;
			if (step > 0.5 / count) step = 0.5 / count;
			else if (step < -0.5 / count) step = -0.5 / count;
			nu += step;
			dc = this.jointStep(spec, nu, count, withDc, outA, outB, 0, false);
			if (Math.abs(step) < 1e-10) break;
		}
		this.nu = nu;
		return dc;
	}

	/**
	 * One linear solve (withNu = false: amplitudes and DC into outA/outB, DC returned) or one Gauss-Newton
	 * step for ν given the current amplitudes (withNu = true: returns Δν, leaves outA/outB alone).
	 */
	private jointStep(
		spec: Spectrum,
		nu: number,
		count: number,
		withDc: boolean,
		outA: Float64Array,
		outB: Float64Array,
		dcNow: number,
		withNu: boolean
	): number {
		const iDc = 2 * count;
		const iNu = iDc + (withDc ? 1 : 0);
		const p = iNu + (withNu ? 1 : 0);
		const ata = this.jAta;
		const atb = this.jAtb;
		const col = this.jCol;
		const idx = this.jIdx;
		const c = this.colv;
		ata.fill(0, 0, p * p);
		atb.fill(0, 0, p);
		const fitW = this.fitHalfWidth;
		const reach = this.subtractHalfWidth + 1;
		const h = 1e-5;
		const kMax = Math.min(this.halfBins, Math.round(count * nu) + fitW);
		for (let k = 0; k <= kMax; k++) {
			let fitted = withDc && k <= fitW;
			for (let i = 1; i <= count && !fitted; i++) if (Math.abs(k - i * nu) <= fitW + 0.5) fitted = true;
			if (!fitted) continue;
			// Columns of every tone close enough to leave energy in this bin (farther ones are below −170 dB).
			let m = 0;
			let mr = 0;
			let mi = 0;
			let dr = 0;
			let di = 0;
			for (let i = 0; i < count; i++) {
				const nuI = (i + 1) * nu;
				if (Math.abs(k - nuI) > reach) continue;
				if (withNu) {
					// ∂model/∂ν: harmonic h moves h times as fast as the fundamental.
					const a = outA[i];
					const b = outB[i];
					this.columns(k, nuI + h, false);
					const pr = a * c[0] + b * c[2];
					const pi = a * c[1] + b * c[3];
					this.columns(k, nuI - h, false);
					dr += ((i + 1) * (pr - (a * c[0] + b * c[2]))) / (2 * h);
					di += ((i + 1) * (pi - (a * c[1] + b * c[3]))) / (2 * h);
					this.columns(k, nuI, false);
					mr += a * c[0] + b * c[2];
					mi += a * c[1] + b * c[3];
				} else this.columns(k, nuI, false);
				col[2 * m] = c[0];
				col[2 * m + 1] = c[1];
				idx[m++] = 2 * i;
				col[2 * m] = c[2];
				col[2 * m + 1] = c[3];
				idx[m++] = 2 * i + 1;
			}
			if (withDc && k <= reach) {
				this.k(k);
				col[2 * m] = this.kv[0];
				col[2 * m + 1] = this.kv[1];
				idx[m++] = iDc;
				mr += dcNow * this.kv[0];
				mi += dcNow * this.kv[1];
			}
			if (withNu) {
				col[2 * m] = dr;
				col[2 * m + 1] = di;
				idx[m++] = iNu;
			}
			// Linear solve fits the spectrum itself; the Gauss-Newton step fits the residual.
			const xr = withNu ? spec[2 * k] - mr : spec[2 * k];
			const xi = withNu ? spec[2 * k + 1] - mi : spec[2 * k + 1];
			for (let u = 0; u < m; u++) {
				const ur = col[2 * u];
				const ui = col[2 * u + 1];
				const iu = idx[u];
				atb[iu] += ur * xr + ui * xi;
				for (let v = 0; v < m; v++) ata[iu * p + idx[v]] += ur * col[2 * v] + ui * col[2 * v + 1];
			}
		}
		if (!solve(ata, atb, p)) {
			if (withNu) return NaN;
			outA.fill(0, 0, count);
			outB.fill(0, 0, count);
			return 0;
		}
		if (withNu) return atb[iNu];
		for (let i = 0; i < count; i++) {
			outA[i] = atb[2 * i];
			outB[i] = atb[2 * i + 1];
		}
		return withDc ? atb[iDc] : 0;
	}

	/** The analysis window's kernel K(u) (bins) into out[0], out[1]; zero beyond the subtraction reach. */
	kernelAt(u: number, out: Float64Array): void {
		this.k(u);
		out[0] = this.kv[0];
		out[1] = this.kv[1];
	}

	/** Kernel K(u) into kv, skipping far side lobes (the analysis window's are below −170 dB). */
	private k(u: number): void {
		const n = this.n;
		const r = u - n * Math.round(u / n);
		if (Math.abs(r) > this.subtractHalfWidth + 1) {
			this.kv[0] = 0;
			this.kv[1] = 0;
			return;
		}
		this.kernel.eval(r, this.kv, 0);
	}

	/** Model columns at bin k for a tone at ν: cos → colv[0,1], sin → colv[2,3], DC → colv[4,5]. */
	private columns(k: number, nu: number, withDc: boolean): void {
		const c = this.colv;
		this.k(k - nu);
		const pr = this.kv[0];
		const pi = this.kv[1];
		this.k(k + nu);
		const qr = this.kv[0];
		const qi = this.kv[1];
		c[0] = (pr + qr) / 2;
		c[1] = (pi + qi) / 2;
		// sin = (e^{jθ} − e^{−jθ})/(2j): multiply (P − Q) by −j/2.
		c[2] = (pi - qi) / 2;
		c[3] = -(pr - qr) / 2;
		if (withDc) {
			this.k(k);
			c[4] = this.kv[0];
			c[5] = this.kv[1];
		}
	}

	private range(nu: number, half: number): [number, number] {
		const c = Math.round(nu);
		return [Math.max(0, c - half), Math.min(this.halfBins, c + half)];
	}

	/** 3-parameter fit (a, b and optionally DC) at a fixed frequency ν (bins). */
	fitFixed(spec: Spectrum, nu: number, withDc = false): void {
		const p = withDc ? 3 : 2;
		const ata = this.ata;
		const atb = this.atb;
		ata.fill(0);
		atb.fill(0);
		const c = this.colv;
		const [k0, k1] = this.range(nu, this.fitHalfWidth);
		for (let k = k0; k <= k1; k++) {
			this.columns(k, nu, withDc);
			const xr = spec[2 * k];
			const xi = spec[2 * k + 1];
			for (let i = 0; i < p; i++) {
				const ir = c[2 * i];
				const ii = c[2 * i + 1];
				atb[i] += ir * xr + ii * xi;
				for (let j = 0; j <= i; j++) ata[i * p + j] += ir * c[2 * j] + ii * c[2 * j + 1];
			}
		}
		for (let i = 0; i < p; i++) for (let j = 0; j < i; j++) ata[j * p + i] = ata[i * p + j];
		if (!solve(ata, atb, p)) {
			this.a = 0;
			this.b = 0;
			this.dc = 0;
			this.nu = nu;
			return;
		}
		this.a = atb[0];
		this.b = atb[1];
		this.dc = withDc ? atb[2] : 0;
		this.nu = nu;
	}

	/**
	 * 4-parameter fit: starts at `nuGuess` (bins) and refines the frequency by Gauss-Newton on the
	 * main-lobe bins until the step is below 1e-10 bin. DC is fitted jointly when `withDc`.
	 */
	fitFree(spec: Spectrum, nuGuess: number, withDc = false, maxIter = 12): void {
		let nu = nuGuess;
		this.fitFixed(spec, nu, withDc);
		const p = withDc ? 4 : 3; // a, b, [dc], ν
		const iNu = p - 1;
		const ata = this.ata;
		const atb = this.atb;
		const c = this.colv;
		const dcol = this.dcol;
		const h = 1e-5;
		for (let it = 0; it < maxIter; it++) {
			const a = this.a;
			const b = this.b;
			const dc = this.dc;
			ata.fill(0);
			atb.fill(0);
			const [k0, k1] = this.range(nu, this.fitHalfWidth);
			for (let k = k0; k <= k1; k++) {
				// ∂model/∂ν by a central difference of the exact kernel; it only steers the iteration.
				this.columns(k, nu + h, false);
				const pr = a * c[0] + b * c[2];
				const pi = a * c[1] + b * c[3];
				this.columns(k, nu - h, false);
				dcol[0] = (pr - (a * c[0] + b * c[2])) / (2 * h);
				dcol[1] = (pi - (a * c[1] + b * c[3])) / (2 * h);
				this.columns(k, nu, withDc);
				let mr = a * c[0] + b * c[2];
				let mi = a * c[1] + b * c[3];
				if (withDc) {
					mr += dc * c[4];
					mi += dc * c[5];
				}
				const rr = spec[2 * k] - mr;
				const ri = spec[2 * k + 1] - mi;
				// Put the ν column where the normal-equation loop below expects it.
				c[2 * iNu] = dcol[0];
				c[2 * iNu + 1] = dcol[1];
				for (let i = 0; i < p; i++) {
					const ir = c[2 * i];
					const ii = c[2 * i + 1];
					atb[i] += ir * rr + ii * ri;
					for (let j = 0; j <= i; j++) ata[i * p + j] += ir * c[2 * j] + ii * c[2 * j + 1];
				}
			}
			for (let i = 0; i < p; i++) for (let j = 0; j < i; j++) ata[j * p + i] = ata[i * p + j];
			if (!solve(ata, atb, p)) break;
			let step = atb[iNu];
			// Keep the iteration inside the main lobe; a huge step means we started on the wrong peak.
			if (step > 0.5) step = 0.5;
			else if (step < -0.5) step = -0.5;
			nu += step;
			this.fitFixed(spec, nu, withDc);
			if (Math.abs(step) < 1e-10) break;
		}
		this.fitFixed(spec, nu, withDc);
	}

	/** Subtracts the last fitted tone (and its DC, when fitted) from `spec` around ν (and around DC). */
	subtract(spec: Spectrum, a = this.a, b = this.b, nu = this.nu, dc = this.dc): void {
		const c = this.colv;
		const [k0, k1] = this.range(nu, this.subtractHalfWidth);
		for (let k = k0; k <= k1; k++) {
			this.columns(k, nu, false);
			spec[2 * k] -= a * c[0] + b * c[2];
			spec[2 * k + 1] -= a * c[1] + b * c[3];
		}
		if (dc !== 0) this.subtractDc(spec, dc);
	}

	/** Least-squares DC (sample units) from the bins around DC; call after the tones are removed. */
	fitDc(spec: Spectrum): number {
		let num = 0;
		let den = 0;
		const last = Math.min(this.halfBins, this.fitHalfWidth);
		for (let k = 0; k <= last; k++) {
			this.k(k);
			num += this.kv[0] * spec[2 * k] + this.kv[1] * spec[2 * k + 1];
			den += this.kv[0] * this.kv[0] + this.kv[1] * this.kv[1];
		}
		return den > 0 ? num / den : 0;
	}

	/** Removes a DC of `dc` sample units from the bins around DC. */
	subtractDc(spec: Spectrum, dc: number): void {
		const last = Math.min(this.halfBins, this.subtractHalfWidth);
		for (let k = 0; k <= last; k++) {
			this.k(k);
			spec[2 * k] -= dc * this.kv[0];
			spec[2 * k + 1] -= dc * this.kv[1];
		}
	}

	/** Amplitude (peak, sample units) of the last fit. */
	get amplitude(): number {
		return Math.hypot(this.a, this.b);
	}
}

/** Index of the largest |X_k|² for k in [k0, k1]. */
export function peakBin(spec: Spectrum, k0: number, k1: number): number {
	let best = -1;
	let bestK = k0;
	for (let k = k0; k <= k1; k++) {
		const p = spec[2 * k] * spec[2 * k] + spec[2 * k + 1] * spec[2 * k + 1];
		if (p > best) {
			best = p;
			bestK = k;
		}
	}
	return bestK;
}

/** Fractional peak position by a parabola through the log magnitudes of the three top bins. */
export function interpolatePeak(spec: Spectrum, k: number, halfBins: number): number {
	if (k <= 0 || k >= halfBins) return k;
	const m = (i: number) => Math.log(spec[2 * i] * spec[2 * i] + spec[2 * i + 1] * spec[2 * i + 1] + 1e-300);
	const al = m(k - 1);
	const be = m(k);
	const ga = m(k + 1);
	const den = al - 2 * be + ga;
	if (!(den < 0)) return k;
	const d = (0.5 * (al - ga)) / den;
	return k + Math.max(-0.5, Math.min(0.5, d));
}
