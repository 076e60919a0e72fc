// The bench page's analysis worker: takes bridge frames (transferred, never copied on the main
// thread), keeps per-channel ring buffers, runs the measurement core at a bounded rate and posts
// readouts, a log-spaced display spectrum and a triggered scope trace back as transferables.
// Steady state allocates no sample-sized arrays: rings, FFT buffers and result buffers are reused.
/// <reference lib="webworker" />
import { Analyzer, encodeWav, SteadinessTracker, stereoFigures } from '$lib/dsp';
import type {
	AnalysisSettings,
	FromWorker,
	SteadinessFigures,
	ToWorker,
	WorkerResult
} from './analysis-messages';
import { CAPTURE_SECONDS } from './analysis-messages';
import { FRAME_HEADER_BYTES } from '$lib/bridge/frame';

const ctx = self as unknown as DedicatedWorkerGlobalScope;

/** Display resolution of the spectrum: points per decade on the log axis. */
const POINTS_PER_DECADE = 240;
const DISPLAY_MIN_HZ = 10;

let sampleRateHz = 0;
let channelCount = 0;
let fullScale: number[] = [];
let settings: AnalysisSettings | null = null;

let rings: Float32Array[] = [];
let ringCap = 0;
/** Samples written per channel since the last reset (monotone). */
let written = 0;
let lastReceivedAtMs = 0;
let framesIngested = 0;
let discontinuities = 0;

let analyzers: Analyzer[] = [];
let analysed: number[] = [];
let scratch: Float32Array[] = [];
let trackers: SteadinessTracker[] = [];
let lastAnalysisAt = 0;
let updateBudget = 1;
/** Samples per incoming frame (the update rate cannot exceed rate / frame size). */
let frameSamples = 0;
let trackerCapacity = 0;
let resultCount = 0;

// Display axis: bucket edges in bins and the x value of each point.
let axisVersion = 0;
let bucketStart = new Int32Array(0);
let bucketEnd = new Int32Array(0);
let displayLen = 0;
let scopeLen = 0;

// Buffers the page gave back, by byte length, for reuse.
const pool = new Map<number, ArrayBuffer[]>();
function take(bytes: number): ArrayBuffer {
	const list = pool.get(bytes);
	return list?.pop() ?? new ArrayBuffer(bytes);
}
function give(buf: ArrayBuffer): void {
	if (buf.byteLength === 0) return; // detached
	let list = pool.get(buf.byteLength);
	if (!list) pool.set(buf.byteLength, (list = []));
	if (list.length < 8) list.push(buf);
}

function post(msg: FromWorker, transfer: Transferable[] = []): void {
	ctx.postMessage(msg, transfer);
}

function rebuild(): void {
	if (!settings || sampleRateHz <= 0 || channelCount <= 0) return;
	const s = settings;
	const fft = s.fftSize;
	const captureSamples = Math.ceil(CAPTURE_SECONDS * sampleRateHz);
	const cap = Math.max(fft, captureSamples) + 65536;
	if (cap !== ringCap || rings.length !== channelCount) {
		ringCap = cap;
		rings = Array.from({ length: channelCount }, () => new Float32Array(cap));
		written = 0;
	}
	analysed =
		s.channels === 'left'
			? [0]
			: s.channels === 'right' && channelCount > 1
				? [1]
				: Array.from({ length: Math.min(2, channelCount) }, (_, i) => i);
	const nyquist = sampleRateHz / 2;
	const band: [number, number] = [Math.max(0, s.bandHz[0]), Math.min(nyquist, s.bandHz[1])];
	analyzers = analysed.map(
		() =>
			new Analyzer(fft, sampleRateHz, {
				window: s.window,
				bandHz: band,
				weighting: s.weighting,
				loadOhms: s.loadOhms ?? undefined,
				referenceVrms: s.referenceVrms ?? undefined,
				averaging: s.averaging,
				averages: s.averaging === 'power' ? Math.max(1, Math.round(s.averages)) : 1,
				alpha: s.averaging === 'exponential' ? 1 / Math.max(1, s.averages) : undefined,
				stimulus: s.stimulus ?? 'tone',
				mainsHz: s.mainsHz ?? 50,
				toneMarginDb: s.toneMarginDb,
				expectedFrequencyHz: s.expectedFrequencyHz ?? undefined,
				imdF1Hz: s.imdF1Hz ?? undefined,
				imdF2Hz: s.imdF2Hz ?? undefined,
				spectrum: true
			})
	);
	scratch = analysed.map(() => new Float32Array(fft));
	trackers = [];
	trackerCapacity = 0;

	// Log-spaced display buckets: one point per bin where bins are sparser than the spacing,
	// the loudest bin of each bucket above that (peaks survive the reduction).
	const binHz = sampleRateHz / fft;
	const bins = fft / 2 + 1;
	const starts: number[] = [];
	const ends: number[] = [];
	const xs: number[] = [];
	const fLo = Math.max(DISPLAY_MIN_HZ, binHz);
	const step = 10 ** (1 / POINTS_PER_DECADE);
	let k = Math.max(1, Math.ceil(fLo / binHz));
	let edge = k * binHz;
	while (k < bins) {
		edge *= step;
		let kEnd = Math.ceil(edge / binHz);
		if (kEnd <= k) kEnd = k + 1;
		if (kEnd > bins) kEnd = bins;
		starts.push(k);
		ends.push(kEnd);
		xs.push(((k + kEnd - 1) / 2) * binHz);
		k = kEnd;
		edge = Math.max(edge, k * binHz);
	}
	bucketStart = Int32Array.from(starts);
	bucketEnd = Int32Array.from(ends);
	displayLen = xs.length;
	scopeLen = Math.max(16, Math.min(ringCap - 1, Math.round((s.scopeSpanMs / 1000) * sampleRateHz)));
	const scopeMs = new Float64Array(scopeLen);
	for (let i = 0; i < scopeLen; i++) scopeMs[i] = (i * 1000) / sampleRateHz;
	axisVersion++;
	pool.clear();
	updateBudget = 1;
	post({ type: 'axis', version: axisVersion, displayHz: Float64Array.from(xs), scopeMs });
}

function ingest(m: Extract<ToWorker, { type: 'frame' }>): void {
	const { buffer, receivedAtMs } = m;
	if (buffer.byteLength < FRAME_HEADER_BYTES || buffer.byteLength % 4 !== 0 || rings.length === 0) return;
	// The page read the header already (it needs seq for drop counting) and sends its fields along,
	// so the only per-frame object here is the one view the samples need.
	const { channels: ch, sampleRateHz: rate, sampleCount: count, flags } = m;
	const all = new Float32Array(buffer);
	if (ch !== channelCount || rate !== sampleRateHz) {
		post({
			type: 'error',
			message: `frame has ${ch} channels at ${rate} Hz; expected ${channelCount} at ${sampleRateHz} Hz`
		});
		return;
	}
	if (buffer.byteLength !== FRAME_HEADER_BYTES + ch * count * 4) return;
	if (flags & 1) {
		// Samples were lost upstream: the history no longer joins up, so averages and steadiness restart.
		discontinuities++;
		for (const a of analyzers) a.reset();
		for (const t of trackers) t.reset();
	}
	const cap = ringCap;
	let pos = written % cap;
	for (let c = 0; c < ch; c++) {
		const ring = rings[c];
		let p = pos;
		for (let i = 0, j = 8 + c; i < count; i++, j += ch) {
			ring[p] = all[j];
			if (++p === cap) p = 0;
		}
	}
	pos = (pos + count) % cap;
	written += count;
	frameSamples = count;
	lastReceivedAtMs = receivedAtMs;
	framesIngested++;
}

/** Copy the newest `n` samples of a ring into `out` (unwrapping). */
function latest(ring: Float32Array, out: Float32Array, n: number, endOffset = 0): void {
	const cap = ringCap;
	const end = (written - endOffset) % cap;
	const start = (end - n + cap) % cap;
	if (start + n <= cap) out.set(ring.subarray(start, start + n));
	else {
		const first = cap - start;
		out.set(ring.subarray(start, cap), 0);
		out.set(ring.subarray(0, n - first), first);
	}
}

function ringAt(ring: Float32Array, index: number): number {
	return ring[index % ringCap];
}

function maybeAnalyse(): void {
	const s = settings;
	if (!s || analyzers.length === 0) return;
	const now = performance.now();
	// A token bucket rather than a minimum gap: frames arriving every 43 ms against a 50 ms gap would
	// halve the rate. The bucket holds up to two updates so credit is not lost between frames; on
	// average it gives maxUpdatesPerS, and never more than one result per frame.
	updateBudget = Math.min(2, updateBudget + ((now - lastAnalysisAt) * s.maxUpdatesPerS) / 1000);
	lastAnalysisAt = now;
	if (updateBudget < 1 || written < s.fftSize) return;
	updateBudget -= 1;
	const t0 = performance.now();

	// The steadiness tracker counts results, not seconds: size it for the results that arrive in the
	// window at the actual update rate (frames may come slower than maxUpdatesPerS).
	const perS = Math.min(s.maxUpdatesPerS, frameSamples > 0 ? sampleRateHz / frameSamples : s.maxUpdatesPerS);
	const capacity = Math.max(3, Math.round(s.steadinessWindowS * perS));
	if (capacity !== trackerCapacity || trackers.length !== analysed.length) {
		trackerCapacity = capacity;
		trackers = analysed.map(() => new SteadinessTracker(capacity));
	}

	const results = [];
	const spectra: Float32Array[] = [];
	const steadiness: SteadinessFigures[] = [];
	for (let i = 0; i < analysed.length; i++) {
		const c = analysed[i];
		latest(rings[c], scratch[i], s.fftSize);
		const r = analyzers[i].analyze(scratch[i], fullScale[c] ?? 1, c);
		results.push(r);
		trackers[i].push(r.levelDbv, r.thdnDb);
		const st = trackers[i].stats();
		const enough = st.frames >= 3;
		steadiness.push({
			levelSpreadDb: enough ? st.levelSpreadDb : null,
			thdnSpreadDb: enough ? st.thdnSpreadDb : null,
			count: st.frames,
			windowS: s.steadinessWindowS
		});
		const full = analyzers[i].spectrumDbv;
		const out = new Float32Array(take(displayLen * 4));
		for (let p = 0; p < displayLen; p++) {
			let m = -Infinity;
			const e = bucketEnd[p];
			for (let k = bucketStart[p]; k < e; k++) if (full[k] > m) m = full[k];
			out[p] = m;
		}
		spectra.push(out);
	}

	// Balance and crosstalk by the same rule the server applies to a snapshot (stereoFigures).
	let balanceDb: number | null = null;
	let crosstalkDb: number | null = null;
	if (results.length === 2) {
		const st = stereoFigures(
			{ result: results[0], analyzer: analyzers[0] },
			{ result: results[1], analyzer: analyzers[1] }
		);
		balanceDb = st.balanceDb;
		crosstalkDb = st.crosstalkDb ?? null;
	}

	// Scope: the newest span that starts on a rising crossing of the trigger level.
	const scope: Float32Array[] = [];
	const trig = Math.min(Math.max(0, s.triggerChannel), channelCount - 1);
	const level = s.triggerLevelV / (fullScale[trig] ?? 1);
	const tRing = rings[trig];
	const searchLen = Math.min(Math.round(sampleRateHz / 20), written - scopeLen - 1, ringCap - scopeLen - 2);
	let startIdx = written - scopeLen;
	let triggered = false;
	for (let i = written - scopeLen; i > written - scopeLen - searchLen; i--) {
		if (ringAt(tRing, i - 1) < level && ringAt(tRing, i) >= level) {
			startIdx = i;
			triggered = true;
			break;
		}
	}
	for (const c of analysed) {
		const out = new Float32Array(take(scopeLen * 4));
		const fs = fullScale[c] ?? 1;
		const ring = rings[c];
		for (let i = 0; i < scopeLen; i++) out[i] = ringAt(ring, startIdx + i) * fs;
		scope.push(out);
	}

	const msg: WorkerResult = {
		type: 'result',
		n: ++resultCount,
		frameReceivedAtMs: lastReceivedAtMs,
		analysisMs: performance.now() - t0,
		sampleRateHz,
		fftSize: s.fftSize,
		binHz: sampleRateHz / s.fftSize,
		channelIndex: analysed,
		results,
		balanceDb,
		crosstalkDb,
		steadiness,
		spectra,
		axisVersion,
		scope,
		scopeTriggered: triggered,
		discontinuities,
		framesIngested
	};
	framesIngested = 0;
	post(msg, [...spectra.map((a) => a.buffer as ArrayBuffer), ...scope.map((a) => a.buffer as ArrayBuffer)]);
}

function capture(id: number, seconds: number): void {
	const s = settings;
	if (!s || rings.length === 0)
		return post({ type: 'capture-error', id, message: 'the analysis is not running' });
	const wanted = Math.max(s.fftSize, Math.round(seconds * sampleRateHz));
	const n = Math.min(wanted, written, ringCap - 1);
	if (n < s.fftSize)
		return post({ type: 'capture-error', id, message: 'not enough audio yet for one FFT frame' });
	const chans = rings.map((ring) => {
		const out = new Float32Array(n);
		latest(ring, out, n);
		return out;
	});
	const bytes = encodeWav(chans, sampleRateHz);
	const wav =
		bytes.byteOffset === 0 &&
		bytes.byteLength === bytes.buffer.byteLength &&
		bytes.buffer instanceof ArrayBuffer
			? bytes.buffer
			: (bytes.slice().buffer as ArrayBuffer);
	post({ type: 'capture', id, wav, sampleCount: n, sampleRateHz, channels: chans.length }, [wav]);
}

ctx.onmessage = (ev: MessageEvent<ToWorker>) => {
	const m = ev.data;
	try {
		switch (m.type) {
			case 'config':
				sampleRateHz = m.sampleRateHz;
				channelCount = m.channels;
				fullScale = m.fullScaleVolts;
				settings = m.settings;
				ringCap = 0;
				rebuild();
				break;
			case 'settings':
				settings = m.settings;
				rebuild();
				break;
			case 'frame':
				ingest(m);
				maybeAnalyse();
				break;
			case 'recycle':
				for (const b of m.buffers) give(b);
				break;
			case 'reset':
				written = 0;
				for (const a of analyzers) a.reset();
				for (const t of trackers) t.reset();
				break;
			case 'capture':
				capture(m.id, m.seconds);
				break;
		}
	} catch (e) {
		post({ type: 'error', message: e instanceof Error ? e.message : String(e) });
	}
};
