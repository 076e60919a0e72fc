// Messages between the page and the analysis worker (analysis.worker.ts). Large arrays travel as
// transferables; the page hands spectrum and scope buffers back with `recycle` so the worker
// reuses them instead of allocating new ones for every update.
import type { ChannelResult, MainsHz, Stimulus, Weighting } from '$lib/dsp/types';
import type { GeneratorState } from '$lib/bridge/protocol';
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
	/** What drives the unit: set from the generator (off → 'none'), see stimulusFromGenerator. */
	stimulus: Stimulus;
	/** Generator frequency with a sine: a strongest tone elsewhere reads as "no signal". */
	expectedFrequencyHz: number | null;
	/** The two tones of an IMD stimulus (null = the method's defaults). */
	imdF1Hz: number | null;
	imdF2Hz: number | null;
	/** Mains frequency for the hum breakdown (shop setting). */
	mainsHz: MainsHz;
	/** A tone must stand this far above the noise to count as a signal, dB. */
	toneMarginDb: number;
}

/** The analysis settings that follow the generator: off (or noise) → no tone to measure. */
export function stimulusFromGenerator(
	g: GeneratorState | null
): Pick<AnalysisSettings, 'stimulus' | 'expectedFrequencyHz' | 'imdF1Hz' | 'imdF2Hz'> {
	if (!g || g.kind === 'off' || g.kind === 'noise')
		return { stimulus: 'none', expectedFrequencyHz: null, imdF1Hz: null, imdF2Hz: null };
	if (g.kind === 'sine')
		return { stimulus: 'tone', expectedFrequencyHz: g.frequencyHz, imdF1Hz: null, imdF2Hz: null };
	if (g.kind === 'smpte')
		return { stimulus: 'smpte', expectedFrequencyHz: null, imdF1Hz: g.lowHz, imdF2Hz: g.highHz };
	return { stimulus: 'twin-tone', expectedFrequencyHz: null, imdF1Hz: g.f1Hz, imdF2Hz: g.f2Hz };
}

/** One line for the readouts caption: which stimulus the figures assume. */
export function stimulusCaption(
	s: Pick<AnalysisSettings, 'stimulus' | 'expectedFrequencyHz' | 'mainsHz'>
): string {
	switch (s.stimulus) {
		case 'none':
			return `Generator off: residual noise and hum (total in-band rms, nothing removed; mains ${s.mainsHz} Hz)`;
		case 'smpte':
			return 'Generator SMPTE two-tone: IMD shown, THD hidden';
		case 'twin-tone':
			return 'Generator twin-tone: IMD shown, THD hidden';
		default:
			return s.expectedFrequencyHz
				? `Generator sine ${s.expectedFrequencyHz} Hz: THD, THD+N and SNR re the tone`
				: 'Sine stimulus: THD, THD+N and SNR re the strongest tone';
	}
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
	steadinessWindowS: 3,
	stimulus: 'tone',
	expectedFrequencyHz: null,
	imdF1Hz: null,
	imdF2Hz: null,
	mainsHz: 50,
	toneMarginDb: 10
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
