// Messages between the page and the analysis worker (analysis.worker.ts). Large arrays travel as
// transferables; the page hands spectrum and scope buffers back with `recycle` so the worker
// reuses them instead of allocating new ones for every update.
import type { ChannelResult, Weighting } from '$lib/dsp/types';
import type { WindowName } from '$lib/dsp/windows';

export const FFT_SIZES = [4096, 8192, 16384, 32768, 65536, 131072, 262144] as const;
export type FftSize = (typeof FFT_SIZES)[number];

export type ChannelChoice = 'both' | 'left' | 'right';
export type AveragingChoice = 'none' | 'power' | 'exponential';

export interface AnalysisSettings {
	fftSize: FftSize;
	window: WindowName;
	averaging: AveragingChoice;
	/** Frames in a power average, or 1/alpha for exponential smoothing. */
	averages: number;
	bandHz: [number, number];
	weighting: Weighting;
	/** Load for power (P = V²/R); null = no power figure. */
	loadOhms: number | null;
	/** Generator level in V rms for gain; null = no gain figure. */
	referenceVrms: number | null;
	channels: ChannelChoice;
	/** Upper bound on results per second. */
	maxUpdatesPerS: number;
	/** Scope: time span shown, ms. */
	scopeSpanMs: number;
	/** Scope trigger: channel index, level in volts, rising edge. */
	triggerChannel: number;
	triggerLevelV: number;
	/** Seconds of history for the steadiness figures. */
	steadinessWindowS: number;
}

export const DEFAULT_SETTINGS: AnalysisSettings = {
	fftSize: 65536,
	window: 'blackman-harris-7',
	averaging: 'none',
	averages: 4,
	bandHz: [20, 20000],
	weighting: 'none',
	loadOhms: 8,
	referenceVrms: null,
	channels: 'both',
	maxUpdatesPerS: 20,
	scopeSpanMs: 5,
	triggerChannel: 0,
	triggerLevelV: 0,
	steadinessWindowS: 3
};

/** Seconds of audio the worker keeps per channel, so a capture can carry the steadiness window. */
export const CAPTURE_SECONDS = 6;

export type ToWorker =
	| {
			type: 'config';
			sampleRateHz: number;
			/** Channels in the incoming frames. */
			channels: number;
			fullScaleVolts: number[];
			settings: AnalysisSettings;
	  }
	| { type: 'settings'; settings: AnalysisSettings }
	/** A whole bridge frame (32-byte header + interleaved float32), transferred. */
	| {
			type: 'frame';
			buffer: ArrayBuffer;
			receivedAtMs: number;
			channels: number;
			sampleRateHz: number;
			sampleCount: number;
			flags: number;
	  }
	| { type: 'recycle'; buffers: ArrayBuffer[] }
	| { type: 'reset' }
	/** Ask for the newest audio as a WAV (the analysed frame plus the steadiness history). */
	| { type: 'capture'; id: number; seconds: number };

export interface SteadinessFigures {
	/** Max − min of the level over the window, dB. */
	levelSpreadDb: number | null;
	/** Max − min of THD+N (dB) over the window. */
	thdnSpreadDb: number | null;
	/** How many results the window holds. */
	count: number;
	windowS: number;
}

export interface WorkerResult {
	type: 'result';
	/** Increments with each result. */
	n: number;
	/** Arrival time (page clock) of the newest frame this result includes. */
	frameReceivedAtMs: number;
	analysisMs: number;
	sampleRateHz: number;
	fftSize: number;
	binHz: number;
	/** Channel indices analysed, in the same order as `results`. */
	channelIndex: number[];
	results: ChannelResult[];
	balanceDb: number | null;
	/** From `stereoFigures`: null unless one channel is driven (channels ≥ CROSSTALK_MIN_BALANCE_DB apart). */
	crosstalkDb: number | null;
	steadiness: SteadinessFigures[];
	/** Display spectrum (dBV) per analysed channel on the shared log-spaced `displayHz` axis. */
	spectra: Float32Array[];
	/** Bumped when the display axis changes; the axis itself comes in an `axis` message. */
	axisVersion: number;
	/** Scope traces in volts per analysed channel, `scopeSpanMs` long, starting at the trigger. */
	scope: Float32Array[];
	scopeTriggered: boolean;
	/** Samples the worker dropped because frames came in with gaps or discontinuities. */
	discontinuities: number;
	/** Heap-free ingest: frames taken in since the last result. */
	framesIngested: number;
}

export type FromWorker =
	| WorkerResult
	| { type: 'axis'; version: number; displayHz: Float64Array; scopeMs: Float64Array }
	| {
			type: 'capture';
			id: number;
			wav: ArrayBuffer;
			sampleCount: number;
			sampleRateHz: number;
			channels: number;
	  }
	| { type: 'capture-error'; id: number; message: string }
	| { type: 'error'; message: string };
