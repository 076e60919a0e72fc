// The CPU-heavy half of a snapshot: decode the uploaded WAV, run the measurement core on its newest
// seconds, steadiness and a compact spectrum, hash the bytes. Pure and synchronous, so the same code
// runs inside the analysis worker (snapshot-analysis.worker.ts, the server's path) and inline (tests,
// fixtures). It imports nothing of the framework and no server module: the worker bundle stays small.
import { createHash } from 'node:crypto';
import {
	Analyzer,
	analyzeFrames,
	compactSpectrum,
	decodeWav,
	isWindowName,
	SteadinessTracker,
	WavError,
	type AnalysisOptions,
	type AnalysisResult,
	type CompactSpectrum,
	type WindowName
} from '$lib/dsp';
import type { Weighting } from '$lib/dsp/types';
import { CAPTURE_SECONDS } from '$lib/workers/analysis-messages';
import {
	SNAPSHOT_MAX_SAMPLE_RATE_HZ,
	SNAPSHOT_MIN_SAMPLE_RATE_HZ,
	SNAPSHOT_MIN_SAMPLES,
	type SnapshotStimulus
} from '$lib/schemas/snapshots';

export const SNAPSHOT_SPECTRUM_POINTS = 2000;
/** Steadiness needs at least this many analysis frames across the capture, else it is "not measured". */
export const STEADINESS_MIN_FRAMES = 3;
/**
 * Steadiness reads at most the newest this-many seconds of a capture (or one FFT frame, if longer):
 * the history the bench keeps and sends (CAPTURE_SECONDS).
 */
export const STEADINESS_MAX_SECONDS = CAPTURE_SECONDS;
/**
 * Steadiness analyses at most this many frames (the live meter, at 20 updates/s over its window,
 * sees fewer) and at most STEADINESS_SAMPLE_BUDGET samples per channel through the analyser; beyond
 * that the frames are spread evenly over the window instead of every fftSize/4. Without this a
 * 768 kHz stereo capture at 4k FFT meant 9,000 analyser runs (~19 s of CPU).
 */
export const STEADINESS_MAX_FRAMES = 240;
export const STEADINESS_SAMPLE_BUDGET = 2 ** 21;
/**
 * The averaged analysis reads at most this many seconds too (or one FFT frame, if longer). With the
 * steadiness bound and the sample-rate range this caps the work per upload at any rate and sample
 * size: older audio is stored, not decoded or analysed.
 */
export const ANALYSIS_MAX_SECONDS = CAPTURE_SECONDS;

/** A refused upload, by where it is wrong (`samples`, `meta` …); the caller answers it as a 400. */
export class AnalysisRefusal extends Error {
	constructor(
		readonly path: string,
		message: string
	) {
		super(message);
		this.name = 'AnalysisRefusal';
	}
}

export interface SteadinessResult {
	channel: number;
	/** Analysis frames across the newest STEADINESS_MAX_SECONDS of the capture (hop fftSize/4 or more). */
	frames: number;
	levelSpreadDb: number | null;
	thdnSpreadDb: number | null;
	levelStdDb: number | null;
	thdnStdDb: number | null;
	/** Audio the steadiness frames span, s (at most STEADINESS_MAX_SECONDS, or one frame). */
	durationS: number;
}

export interface SnapshotSpectrum {
	fftSize: number;
	window: WindowName;
	/** One compact spectrum per channel (dBV, log-spaced points; each channel its own x values). */
	channels: CompactSpectrum[];
}

/** What the worker needs: the WAV and the conditions already settled from profile and meta. */
export interface SnapshotAnalysisRequest {
	wav: Uint8Array;
	/** Peak volts of sample value 1.0: one for all channels or one per channel. */
	fullScaleVolts: number | number[];
	fftSize?: number;
	averages?: number;
	window?: WindowName;
	bandHz: [number, number];
	weighting: Weighting;
	loadOhms?: number;
	referenceVrms?: number;
	/** The test signal during the capture (meta.stimulus). */
	stimulus: SnapshotStimulus;
	/** The shop's mains frequency, where hum sits. */
	mainsHz: 50 | 60;
}

export interface SnapshotAnalysisOutput {
	/** The uploaded bytes, handed back (they travel to the worker and back without a copy). */
	wav: Uint8Array;
	sha256: string;
	sampleRateHz: number;
	channelCount: number;
	/** Samples per channel in the upload, and how many of the newest went into the averaged analysis. */
	capturedSamples: number;
	analysedSamples: number;
	/** Full-scale volts per channel. */
	fullScaleVolts: number[];
	analysis: AnalysisResult;
	steadiness: SteadinessResult[];
	spectrum: SnapshotSpectrum;
}

// ── reading only the part of the WAV that is analysed ───────────────────────

interface WavLayout {
	littleEndian: boolean;
	fmtAt: number;
	fmtSize: number;
	audioFormat: number;
	channelCount: number;
	sampleRateHz: number;
	bitsPerSample: number;
	dataAt: number;
	dataBytes: number;
}

const tag = (b: Uint8Array, at: number) => String.fromCharCode(b[at], b[at + 1], b[at + 2], b[at + 3]);

/**
 * Where the `fmt ` and `data` chunks are, from the RIFF chunk list alone (no samples read). Null for
 * anything unusual, which then goes to the full decoder and its own error messages.
 */
function wavLayout(b: Uint8Array): WavLayout | null {
	if (b.length < 12 || tag(b, 8) !== 'WAVE') return null;
	const head = tag(b, 0);
	if (head !== 'RIFF' && head !== 'RIFX') return null;
	const le = head === 'RIFF';
	const view = new DataView(b.buffer, b.byteOffset, b.byteLength);
	let fmtAt = -1;
	let fmtSize = 0;
	let at = 12;
	while (at + 8 <= b.length) {
		const id = tag(b, at);
		const size = view.getUint32(at + 4, le);
		if (id === 'fmt ') {
			if (size < 16 || at + 8 + size > b.length) return null;
			fmtAt = at;
			fmtSize = size;
		} else if (id === 'data') {
			if (fmtAt < 0 || at + 8 + size > b.length) return null;
			const f = fmtAt + 8;
			return {
				littleEndian: le,
				fmtAt,
				fmtSize,
				audioFormat: view.getUint16(f, le),
				channelCount: view.getUint16(f + 2, le),
				sampleRateHz: view.getUint32(f + 4, le),
				bitsPerSample: view.getUint16(f + 14, le),
				dataAt: at + 8,
				dataBytes: size
			};
		}
		at += 8 + size + (size & 1);
	}
	return null;
}

/** A WAV with the same format chunk and only the newest `keepFrames` sample frames. */
function newestFrames(b: Uint8Array, l: WavLayout, frameBytes: number, keepFrames: number): Uint8Array {
	const frames = Math.floor(l.dataBytes / frameBytes);
	const from = l.dataAt + (frames - keepFrames) * frameBytes;
	const dataBytes = keepFrames * frameBytes;
	const fmtChunk = 8 + l.fmtSize + (l.fmtSize & 1);
	const out = new Uint8Array(12 + fmtChunk + 8 + dataBytes);
	const view = new DataView(out.buffer);
	out.set(b.subarray(0, 12));
	view.setUint32(4, out.length - 8, l.littleEndian);
	out.set(b.subarray(l.fmtAt, l.fmtAt + 8 + l.fmtSize), 12);
	const d = 12 + fmtChunk;
	out.set([0x64, 0x61, 0x74, 0x61], d); // "data"
	view.setUint32(d + 4, dataBytes, l.littleEndian);
	out.set(b.subarray(from, from + dataBytes), d + 8);
	return out;
}

/** True when every float sample in the data chunk is finite (integer PCM always is). */
function floatsFinite(b: Uint8Array, l: WavLayout, bits: number): boolean {
	const view = new DataView(b.buffer, b.byteOffset + l.dataAt, l.dataBytes);
	const step = bits / 8;
	const n = Math.floor(l.dataBytes / step);
	for (let i = 0; i < n; i++) {
		const v =
			bits === 32 ? view.getFloat32(i * step, l.littleEndian) : view.getFloat64(i * step, l.littleEndian);
		if (!Number.isFinite(v)) return false;
	}
	return true;
}

export function sampleRateRefusal(sampleRateHz: number): AnalysisRefusal | null {
	if (sampleRateHz >= SNAPSHOT_MIN_SAMPLE_RATE_HZ && sampleRateHz <= SNAPSHOT_MAX_SAMPLE_RATE_HZ) return null;
	return new AnalysisRefusal(
		'samples',
		`samples: the WAV file's sample rate is ${sampleRateHz} Hz; the server analyses ` +
			`${SNAPSHOT_MIN_SAMPLE_RATE_HZ / 1000} kHz to ${SNAPSHOT_MAX_SAMPLE_RATE_HZ / 1000} kHz`
	);
}

// ── analysis ────────────────────────────────────────────────────────────────

function largestPow2AtMost(n: number): number {
	let p = 1;
	while (p * 2 <= n) p *= 2;
	return p;
}

/**
 * Steadiness over the newest STEADINESS_MAX_SECONDS (at least one frame): frames of fftSize, the
 * bench's frame size, every fftSize/4 samples, or evenly spread when that would exceed the frame
 * or sample budget.
 */
function steadinessOf(
	capture: Float32Array,
	index: number,
	sampleRateHz: number,
	fullScaleVolts: number,
	fftSize: number,
	options: AnalysisOptions
): SteadinessResult {
	const span = Math.min(capture.length, Math.max(fftSize, Math.ceil(STEADINESS_MAX_SECONDS * sampleRateHz)));
	const channel = capture.subarray(capture.length - span);
	const maxFrames = Math.max(
		STEADINESS_MIN_FRAMES,
		Math.min(STEADINESS_MAX_FRAMES, Math.floor(STEADINESS_SAMPLE_BUDGET / fftSize))
	);
	const overlapped =
		channel.length >= fftSize ? Math.floor((channel.length - fftSize) / (fftSize / 4)) + 1 : 0;
	const frames = Math.min(overlapped, maxFrames);
	const hop = frames === overlapped ? fftSize / 4 : Math.floor((channel.length - fftSize) / (frames - 1));
	const base = { channel: index, frames, durationS: channel.length / sampleRateHz };
	if (frames < STEADINESS_MIN_FRAMES)
		return { ...base, levelSpreadDb: null, thdnSpreadDb: null, levelStdDb: null, thdnStdDb: null };
	const analyzer = new Analyzer(fftSize, sampleRateHz, { ...options, averaging: 'none', spectrum: false });
	const tracker = new SteadinessTracker(frames);
	// Frames end at the newest sample, like the live meter's window.
	const start = channel.length - fftSize - (frames - 1) * hop;
	for (let f = 0; f < frames; f++) {
		const off = start + f * hop;
		const r = analyzer.analyze(channel.subarray(off, off + fftSize), fullScaleVolts, index);
		tracker.push(r.levelDbv, r.thdnDb);
	}
	const s = tracker.stats();
	return {
		...base,
		levelSpreadDb: s.levelSpreadDb,
		thdnSpreadDb: s.thdnSpreadDb,
		levelStdDb: s.levelStdDb,
		thdnStdDb: s.thdnStdDb
	};
}

function spectrumOf(
	channels: Float32Array[],
	sampleRateHz: number,
	fsv: number[],
	fftSize: number,
	options: AnalysisOptions
): SnapshotSpectrum {
	const window = options.window ?? 'blackman-harris-7';
	const out: CompactSpectrum[] = channels.map((c, i) => {
		const a = new Analyzer(fftSize, sampleRateHz, { ...options, averaging: 'none', spectrum: true });
		a.analyze(c.subarray(c.length - fftSize), fsv[i]);
		const s = compactSpectrum(a.spectrumDbv, sampleRateHz, fftSize, SNAPSHOT_SPECTRUM_POINTS);
		// Three decimals of a dB are plenty for plots and keep the JSON small.
		return {
			frequencyHz: s.frequencyHz.map((f) => Math.round(f * 1000) / 1000),
			levelDbv: s.levelDbv.map((v) => Math.round(v * 1000) / 1000)
		};
	});
	return { fftSize, window, channels: out };
}

/**
 * Decode, check and analyse an uploaded WAV. Throws AnalysisRefusal for a bad file (the caller
 * answers 400); the work is bounded by ANALYSIS_MAX_SECONDS and STEADINESS_MAX_SECONDS of audio
 * whatever the file's length, sample size or rate.
 */
export function analyseSnapshotAudio(req: SnapshotAnalysisRequest): SnapshotAnalysisOutput {
	const wav = req.wav;
	const layout = wavLayout(wav);
	if (layout) {
		const refusal = sampleRateRefusal(layout.sampleRateHz);
		if (refusal) throw refusal;
	}
	const bits = layout?.bitsPerSample ?? 0;
	const frameBytes = layout ? (bits / 8) * layout.channelCount : 0;
	const usable = layout !== null && Number.isInteger(frameBytes) && frameBytes > 0;
	const totalFrames = usable ? Math.floor(layout.dataBytes / frameBytes) : 0;

	// The analysis plan needs only the header: FFT size, frames averaged and how much audio to decode.
	const plan = (length: number, rate: number) => {
		const fftSize = Math.min(req.fftSize ?? 65_536, largestPow2AtMost(length));
		const maxAnalysed = Math.max(fftSize, Math.ceil(ANALYSIS_MAX_SECONDS * rate));
		const averages = Math.max(
			1,
			Math.min(req.averages ?? 1, Math.floor(length / fftSize), Math.floor(maxAnalysed / fftSize))
		);
		const keep = Math.min(
			length,
			Math.max(averages * fftSize, fftSize, Math.ceil(STEADINESS_MAX_SECONDS * rate))
		);
		return { fftSize, averages, keep };
	};

	let toDecode = wav;
	if (usable && totalFrames >= SNAPSHOT_MIN_SAMPLES) {
		const { keep } = plan(totalFrames, layout.sampleRateHz);
		if (keep < totalFrames) toDecode = newestFrames(wav, layout, frameBytes, keep);
	}
	let decoded;
	try {
		decoded = decodeWav(toDecode);
	} catch (e) {
		if (e instanceof WavError) throw new AnalysisRefusal('samples', `samples: ${e.message}`);
		throw new AnalysisRefusal('samples', 'samples: unreadable WAV file');
	}
	const { sampleRateHz, channels } = decoded;
	const refusal = sampleRateRefusal(sampleRateHz);
	if (refusal) throw refusal;
	const length = toDecode === wav ? channels[0].length : totalFrames;
	if (length < SNAPSHOT_MIN_SAMPLES)
		throw new AnalysisRefusal(
			'samples',
			`samples: the WAV file holds ${length} samples per channel; at least ${SNAPSHOT_MIN_SAMPLES} are needed`
		);
	if (channels.length > 2)
		throw new AnalysisRefusal(
			'samples',
			`samples: ${channels.length} channels; the bench captures one or two`
		);
	// Non-finite samples anywhere in the stored file are refused, not only in the part analysed.
	const finite =
		decoded.format === 'pcm-float' && toDecode !== wav && layout
			? floatsFinite(wav, layout, decoded.bitsPerSample)
			: channels.every((c) => c.every(Number.isFinite));
	if (!finite) throw new AnalysisRefusal('samples', 'samples: the WAV file contains NaN or infinite samples');

	const { fftSize, averages } = plan(length, sampleRateHz);
	const available = channels[0].length;
	const fsv = channels.map((_, i) =>
		Array.isArray(req.fullScaleVolts) ? (req.fullScaleVolts[i] ?? req.fullScaleVolts[0]) : req.fullScaleVolts
	);
	const nyquist = sampleRateHz / 2;
	const [lowHz, highHz] = req.bandHz;
	if (lowHz >= nyquist)
		throw new AnalysisRefusal('meta', `meta: the band starts at ${lowHz} Hz, above Nyquist (${nyquist} Hz)`);
	const window = req.window && isWindowName(req.window) ? req.window : undefined;
	const options: AnalysisOptions = {
		fftSize,
		window,
		bandHz: [lowHz, Math.min(highHz, nyquist)],
		weighting: req.weighting,
		loadOhms: req.loadOhms,
		referenceVrms: req.referenceVrms,
		averages,
		// What the generator played decides what the figures mean: with none, noise is the whole
		// in-band residual and the tone figures are absent; mains sets the hum orders.
		stimulus: req.stimulus,
		mainsHz: req.mainsHz
	};

	// The newest `averages × fftSize` samples are "the frame the bench analysed".
	const analysedSamples = averages * fftSize;
	try {
		const analysis = analyzeFrames(
			channels.map((c) => c.subarray(available - analysedSamples)),
			sampleRateHz,
			fsv,
			options
		);
		const steadiness = channels.map((c, i) => steadinessOf(c, i, sampleRateHz, fsv[i], fftSize, options));
		const spectrum = spectrumOf(channels, sampleRateHz, fsv, fftSize, options);
		return {
			wav,
			sha256: createHash('sha256').update(wav).digest('hex'),
			sampleRateHz,
			channelCount: channels.length,
			capturedSamples: length,
			analysedSamples,
			fullScaleVolts: fsv,
			analysis,
			steadiness,
			spectrum
		};
	} catch (e) {
		if (e instanceof RangeError) throw new AnalysisRefusal('meta', `meta.analysis: ${e.message}`);
		throw e;
	}
}
