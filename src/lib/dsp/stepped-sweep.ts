// A recorded stepped-sine sweep: find its steady steps and measure each one's level per channel.
// Steps are found in the time domain, because a 150 ms step at 20 Hz holds only three cycles (far
// too few for a spectrum to separate 20 Hz from 25 Hz): upward zero crossings (with hysteresis
// against noise) give the frequency over ≥ 10 ms at a time, and a run of crossings at one frequency
// is a step. Each step is then measured with the four-parameter least-squares sine fit of
// IEEE Std 1057 (frequency refined), the other channels with the three-parameter fit at that
// frequency, so levels are exact however few cycles a step holds.

/** Shortest steady step the finder reports (the recording promises ≥ 150 ms; trims and edges take some). */
const MIN_STEP_S = 0.1;
/** A run of crossings shorter than this (or than one period) is not a step's core. */
const MIN_CORE_S = 0.03;
/** A step's core is extended by up to this much each side while the samples continue its sine. */
const MAX_EXTEND_S = 0.06;
/** …that is, while the residual from the core's fitted sine stays below this share of the tone's rms. */
const EXTEND_RESIDUAL = 0.02;
/** Frequency is estimated over at least this span of crossings. */
const ESTIMATE_S = 0.01;
/** A crossing whose estimate strays more than this from the step's running mean starts a new step. */
const FREQ_TOL = 0.01;
/** No crossing for this long breaks a step (silence, or below the sweep's lowest frequency). */
const MAX_GAP_S = 0.07;
/** Blocks quieter than this re the loudest block count as silence. */
const SILENCE_DB = -80;
/** Skipped at the start of each step, for the unit's transient to settle, and at its end. */
const TRIM_START_S = 0.01;
const TRIM_END_S = 0.002;

export interface FoundStep {
	/** Measured region, samples [start, end). */
	start: number;
	end: number;
	/** Refined frequency, Hz. */
	frequencyHz: number;
	/** Per channel: the fitted tone's peak amplitude (sample units) and its share of the region's rms. */
	amplitudes: number[];
	toneShare: number[];
}

/**
 * Upward zero crossings (fractional sample positions) with hysteresis at 8 % of the local peak (a tone near Nyquist has few samples a cycle),
 * and for each crossing whether the signal falls quiet before the next one (a gap between steps:
 * a 2 ms stretch under 5 % of the surrounding peak level, or a block under the silence floor).
 */
export function crossings(x: Float32Array, fs: number): { at: number[]; breakAfter: boolean[] } {
	const block = Math.max(16, Math.round(fs * 0.025));
	const nb = Math.ceil(x.length / block);
	const rms = new Float64Array(nb);
	let loudest = 0;
	for (let b = 0; b < nb; b++) {
		let s = 0;
		const end = Math.min(x.length, (b + 1) * block);
		for (let i = b * block; i < end; i++) s += x[i] * x[i];
		rms[b] = Math.sqrt(s / Math.max(1, end - b * block));
		loudest = Math.max(loudest, rms[b]);
	}
	const floor = loudest * 10 ** (SILENCE_DB / 20);
	// Quiet 2 ms stretches, counted cumulatively so any interval is checked at once.
	const fine = Math.max(4, Math.round(fs * 0.002));
	const nf = Math.ceil(x.length / fine);
	const quietBefore = new Uint32Array(nf + 1);
	for (let k = 0; k < nf; k++) {
		const b = Math.floor((k * fine) / block);
		let around = 0;
		for (let d = -2; d <= 2; d++) if (b + d >= 0 && b + d < nb) around = Math.max(around, rms[b + d]);
		let peak = 0;
		const end = Math.min(x.length, (k + 1) * fine);
		for (let i = k * fine; i < end; i++) peak = Math.max(peak, Math.abs(x[i]));
		const quiet = peak < 0.05 * Math.SQRT2 * around || rms[b] < floor;
		quietBefore[k + 1] = quietBefore[k] + (quiet ? 1 : 0);
	}
	const at: number[] = [];
	let armed = false;
	for (let b = 0; b < nb; b++) {
		const r = Math.max(rms[b], b > 0 ? rms[b - 1] : 0, b + 1 < nb ? rms[b + 1] : 0);
		if (rms[b] < floor) {
			armed = false;
			continue;
		}
		const h = 0.08 * Math.SQRT2 * r;
		const end = Math.min(x.length, (b + 1) * block);
		for (let i = Math.max(1, b * block); i < end; i++) {
			const v = x[i];
			if (v < -h) armed = true;
			else if (armed && v > 0 && x[i - 1] <= 0) {
				at.push(i - 1 + x[i - 1] / (x[i - 1] - v));
				armed = false;
			}
		}
	}
	const breakAfter = at.map((t, i) => {
		if (i + 1 >= at.length) return true;
		const k0 = Math.floor(t / fine);
		const k1 = Math.floor(at[i + 1] / fine);
		return quietBefore[k1 + 1] - quietBefore[k0] > 0;
	});
	return { at, breakAfter };
}

interface Segment {
	first: number;
	last: number;
	/** End of the last estimate's span, samples. */
	endPos: number;
	sumF: number;
	n: number;
}

/** Runs of crossings at one frequency, each at least MIN_CORE_S (and one period) long. */
export function segments(c: { at: number[]; breakAfter: boolean[] }, fs: number): Segment[] {
	const cross = c.at;
	const span = ESTIMATE_S * fs;
	const maxGap = MAX_GAP_S * fs;
	const out: Segment[] = [];
	let cur: Segment | null = null;
	const close = () => {
		if (cur) {
			const core = cur.endPos - cross[cur.first];
			if (core >= MIN_CORE_S * fs && core >= (0.999 * fs) / (cur.sumF / cur.n)) out.push(cur);
		}
		cur = null;
	};
	let j = 0;
	for (let i = 0; i + 1 < cross.length; i++) {
		if (c.breakAfter[i] || cross[i + 1] - cross[i] > maxGap) {
			close();
			continue;
		}
		j = Math.max(j, i + 1);
		while (
			j + 1 < cross.length &&
			cross[j] - cross[i] < span &&
			!c.breakAfter[j] &&
			cross[j + 1] - cross[j] <= maxGap
		)
			j++;
		const f = ((j - i) * fs) / (cross[j] - cross[i]);
		const s: Segment | null = cur;
		if (s && Math.abs(f / (s.sumF / s.n) - 1) <= FREQ_TOL) {
			s.last = i;
			s.endPos = cross[j];
			s.sumF += f;
			s.n++;
		} else {
			close();
			cur = { first: i, last: i, endPos: cross[j], sumF: f, n: 1 };
		}
	}
	close();
	return out;
}

/** Solve the small dense system M·x = b in place (Gaussian elimination, partial pivoting). */
function solve(m: number[][], b: number[]): number[] {
	const n = b.length;
	for (let k = 0; k < n; k++) {
		let p = k;
		for (let r = k + 1; r < n; r++) if (Math.abs(m[r][k]) > Math.abs(m[p][k])) p = r;
		[m[k], m[p]] = [m[p], m[k]];
		[b[k], b[p]] = [b[p], b[k]];
		const d = m[k][k];
		if (d === 0) throw new RangeError('sine fit: singular system');
		for (let r = k + 1; r < n; r++) {
			const f = m[r][k] / d;
			if (f === 0) continue;
			for (let c = k; c < n; c++) m[r][c] -= f * m[k][c];
			b[r] -= f * b[k];
		}
	}
	const x = new Array<number>(n).fill(0);
	for (let k = n - 1; k >= 0; k--) {
		let s = b[k];
		for (let c = k + 1; c < n; c++) s -= m[k][c] * x[c];
		x[k] = s / m[k][k];
	}
	return x;
}

export interface SineFit {
	/** Radians per sample. */
	omega: number;
	a: number;
	b: number;
	dc: number;
	/** Peak amplitude √(a² + b²). */
	amplitude: number;
	/** rms of the data over the region (DC removed), for the tone's share. */
	rms: number;
	/** Sample position t = 0 of the fit (the region's middle). */
	center: number;
}

/** rms of x[from, to) minus the fitted sine, over the fitted tone's rms. */
function residualShare(x: Float32Array, from: number, to: number, f: SineFit): number {
	let ss = 0;
	for (let i = from; i < to; i++) {
		const t = i - f.center;
		const e = x[i] - (f.a * Math.cos(f.omega * t) + f.b * Math.sin(f.omega * t) + f.dc);
		ss += e * e;
	}
	return Math.sqrt(ss / Math.max(1, to - from)) / (f.amplitude / Math.SQRT2);
}

/**
 * Move `edge` outwards (dir −1: earlier, +1: later) by up to a period at a time, at most to `limit`,
 * while the new samples continue the fitted sine: a low step's crossings cover only its middle.
 */
function extendEdge(
	x: Float32Array,
	edge: number,
	dir: -1 | 1,
	limit: number,
	f: SineFit,
	fs: number
): number {
	const period = (2 * Math.PI) / f.omega;
	const stop =
		dir < 0 ? Math.max(limit, edge - MAX_EXTEND_S * fs) : Math.min(limit, edge + MAX_EXTEND_S * fs);
	for (;;) {
		let moved = false;
		for (const frac of [1, 0.5, 0.25]) {
			const len = Math.max(1, Math.round(frac * period));
			const next = edge + dir * len;
			if (dir < 0 ? next < stop : next > stop) continue;
			const [a, b] = dir < 0 ? [next, edge] : [edge, next];
			if (residualShare(x, a, b, f) <= EXTEND_RESIDUAL) {
				edge = next;
				moved = true;
				break;
			}
		}
		if (!moved) return edge;
	}
}

/**
 * Least-squares fit of a·cos(ωt) + b·sin(ωt) + c (+ ω itself when `refine`) to x[start, end), t in
 * samples from the region's middle (IEEE Std 1057 three- and four-parameter sine fits).
 */
export function fitSine(
	x: Float32Array,
	start: number,
	end: number,
	omega: number,
	refine: boolean
): SineFit {
	const n = end - start;
	const mid = (n - 1) / 2;
	let a = 0;
	let b = 0;
	let dc = 0;
	for (let iter = 0; iter < (refine ? 8 : 1); iter++) {
		const four = refine && iter > 0;
		const k = four ? 4 : 3;
		const m = Array.from({ length: k }, () => new Array<number>(k).fill(0));
		const rhs = new Array<number>(k).fill(0);
		const cw = Math.cos(omega);
		const sw = Math.sin(omega);
		let zr = Math.cos(-omega * mid);
		let zi = Math.sin(-omega * mid);
		let sCC = 0,
			sSS = 0,
			sCS = 0,
			sC = 0,
			sS = 0,
			sXC = 0,
			sXS = 0,
			sX = 0;
		let sDD = 0,
			sDC = 0,
			sDS = 0,
			sD = 0,
			sXD = 0;
		for (let i = 0; i < n; i++) {
			const v = x[start + i];
			const c = zr;
			const s = zi;
			sCC += c * c;
			sSS += s * s;
			sCS += c * s;
			sC += c;
			sS += s;
			sXC += v * c;
			sXS += v * s;
			sX += v;
			if (four) {
				const d = (i - mid) * (-a * s + b * c);
				sDD += d * d;
				sDC += d * c;
				sDS += d * s;
				sD += d;
				sXD += v * d;
			}
			const nr = zr * cw - zi * sw;
			zi = zr * sw + zi * cw;
			zr = nr;
		}
		m[0][0] = sCC;
		m[0][1] = sCS;
		m[0][2] = sC;
		m[1][0] = sCS;
		m[1][1] = sSS;
		m[1][2] = sS;
		m[2][0] = sC;
		m[2][1] = sS;
		m[2][2] = n;
		rhs[0] = sXC;
		rhs[1] = sXS;
		rhs[2] = sX;
		if (four) {
			m[0][3] = m[3][0] = sDC;
			m[1][3] = m[3][1] = sDS;
			m[2][3] = m[3][2] = sD;
			m[3][3] = sDD;
			rhs[3] = sXD;
		}
		const sol = solve(m, rhs);
		[a, b, dc] = sol;
		if (four) {
			omega += sol[3];
			if (Math.abs(sol[3]) < 1e-12 * omega) break;
		}
	}
	let ss = 0;
	for (let i = start; i < end; i++) ss += (x[i] - dc) ** 2;
	return { omega, a, b, dc, amplitude: Math.hypot(a, b), rms: Math.sqrt(ss / n), center: start + mid };
}

export interface SteppedSweepOptions {
	/** Channel the steps are found on (default: the one with the most energy). */
	referenceChannel?: number;
	/** A step counts when the fitted tone carries at least this share of the region's rms (default 0.7). */
	minToneShare?: number;
}

/** Find the steady steps of a stepped-sine recording and measure every channel in each. */
export function findSteps(
	channels: readonly Float32Array[],
	sampleRateHz: number,
	opts: SteppedSweepOptions = {}
): FoundStep[] {
	if (!channels.length) throw new RangeError('no channels to analyse');
	const fs = sampleRateHz;
	let ref = opts.referenceChannel ?? 0;
	if (opts.referenceChannel === undefined) {
		let best = -1;
		channels.forEach((c, i) => {
			let e = 0;
			for (let k = 0; k < c.length; k += 7) e += c[k] * c[k];
			if (e > best) [best, ref] = [e, i];
		});
	}
	const x = channels[ref];
	const found = crossings(x, fs);
	const cross = found.at;
	const segs = segments(found, fs);
	const minShare = opts.minToneShare ?? 0.7;
	const out: FoundStep[] = [];
	const measure = (start: number, end: number, omega: number): FoundStep => {
		const fit = fitSine(x, start, end, omega, true);
		const fits = channels.map((c, i) => (i === ref ? fit : fitSine(c, start, end, fit.omega, false)));
		return {
			start,
			end,
			frequencyHz: (fit.omega * fs) / (2 * Math.PI),
			amplitudes: fits.map((f) => f.amplitude),
			toneShare: fits.map((f) => (f.rms > 0 ? f.amplitude / Math.SQRT2 / f.rms : 0))
		};
	};
	let lastEnd = 0;
	segs.forEach((s) => {
		const f0 = s.sumF / s.n;
		const coreStart = Math.max(lastEnd, Math.ceil(cross[s.first]));
		const coreEnd = Math.floor(s.endPos);
		if (coreEnd - coreStart < (0.95 * fs) / f0) return;
		const core = fitSine(x, coreStart, coreEnd, (2 * Math.PI * f0) / fs, true);
		// Forwards only the samples bound it (a run of estimates straddling a gap is no step to stop at).
		const t0 = extendEdge(x, coreStart, -1, lastEnd, core, fs);
		const t1 = extendEdge(x, coreEnd, 1, x.length, core, fs);
		const start = Math.ceil(t0 + Math.min(TRIM_START_S * fs, 0.1 * (t1 - t0)));
		const end = Math.floor(t1 - TRIM_END_S * fs);
		if (end - start < MIN_STEP_S * fs) return;
		const step = measure(start, end, core.omega);
		if (step.toneShare[ref] < minShare) return;
		// A glitch can split one step in two: the halves share a frequency and are measured as one.
		const prev = out.at(-1);
		if (prev && Math.abs(prev.frequencyHz / step.frequencyHz - 1) < FREQ_TOL && start - prev.end < 0.05 * fs)
			out[out.length - 1] = measure(prev.start, end, core.omega);
		else out.push(step);
		lastEnd = t1;
	});
	return out;
}
