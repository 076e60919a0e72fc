// Live analysis on top of a BridgeLink: owns the analysis worker, feeds it the link's frames
// (transferred, never copied here), and holds the newest readouts and plot arrays. Used by the
// bench page; the soak page can use it for THD+N during a run.
import AnalysisWorker from '$lib/workers/analysis.worker?worker';
import type { ChannelResult } from '$lib/dsp/types';
import type { BridgeLink } from './bridge-link.svelte';
import {
	CAPTURE_SECONDS,
	DEFAULT_SETTINGS,
	type AnalysisSettings,
	type FromWorker,
	type SteadinessFigures,
	type ToWorker,
	type WorkerResult
} from '$lib/workers/analysis-messages';

export interface LiveReadouts {
	n: number;
	sampleRateHz: number;
	fftSize: number;
	binHz: number;
	analysisMs: number;
	channelIndex: number[];
	results: ChannelResult[];
	balanceDb: number | null;
	crosstalkDb: number | null;
	steadiness: SteadinessFigures[];
	scopeTriggered: boolean;
	/** The settings these readouts were computed with (conditions to show beside the numbers). */
	settings: AnalysisSettings;
}

export interface CaptureResult {
	wav: ArrayBuffer;
	sampleCount: number;
	sampleRateHz: number;
	channels: number;
}

/** Plot arrays, reused between updates: the page copies each new spectrum into them. */
export interface PlotBuffers {
	displayHz: Float64Array;
	/** Per stream channel (0 = left, 1 = right): current spectrum in dBV, NaN where not analysed. */
	spectrum: Float64Array[];
	scopeMs: Float64Array;
	scope: Float64Array[];
}

export class LiveAnalysis {
	#settings = $state<AnalysisSettings>({ ...DEFAULT_SETTINGS });
	#plainSettings: AnalysisSettings = { ...DEFAULT_SETTINGS };
	#readouts = $state.raw<LiveReadouts | null>(null);
	#error = $state<string | null>(null);
	#running = $state(false);
	/** Bumped on each new spectrum/scope so views know to redraw. */
	#tick = $state(0);
	#axisVersion = 0;

	#worker: Worker | null = null;
	#offFrame: (() => void) | null = null;
	#offHello: (() => void) | null = null;
	// Pending requests and listeners, not UI state: plain collections on purpose.
	/* eslint-disable svelte/prefer-svelte-reactivity */
	#captures = new Map<number, { resolve: (c: CaptureResult) => void; reject: (e: Error) => void }>();
	#nextCapture = 1;
	#channels = 2;
	#resultListeners = new Set<(r: LiveReadouts, frameReceivedAtMs: number) => void>();
	/* eslint-enable svelte/prefer-svelte-reactivity */

	/** Plain (non-reactive) typed arrays; read them when `tick` changes. */
	readonly plot: PlotBuffers = {
		displayHz: new Float64Array(0),
		spectrum: [],
		scopeMs: new Float64Array(0),
		scope: []
	};

	constructor(
		private readonly link: BridgeLink,
		initial: Partial<AnalysisSettings> = {}
	) {
		this.#settings = { ...DEFAULT_SETTINGS, ...initial };
		this.#plainSettings = { ...DEFAULT_SETTINGS, ...initial };
	}

	get settings(): AnalysisSettings {
		return this.#settings;
	}
	get readouts(): LiveReadouts | null {
		return this.#readouts;
	}
	get error(): string | null {
		return this.#error;
	}
	get running(): boolean {
		return this.#running;
	}
	get tick(): number {
		return this.#tick;
	}

	/** Called for every result, before views update (live limit checks, stats). */
	onResult(fn: (r: LiveReadouts, frameReceivedAtMs: number) => void): () => void {
		this.#resultListeners.add(fn);
		return () => this.#resultListeners.delete(fn);
	}

	start(): void {
		if (this.#worker) return;
		const w = new AnalysisWorker();
		this.#worker = w;
		w.onmessage = (ev: MessageEvent<FromWorker>) => this.#onMessage(ev.data);
		w.onerror = (ev) => {
			this.#error = `analysis worker failed: ${ev.message}`;
		};
		const hello = this.link.hello;
		if (hello) this.#configure();
		this.#offHello = this.link.onHello(() => this.#configure());
		this.#offFrame = this.link.onFrame((buffer, info) => {
			const msg: ToWorker = {
				type: 'frame',
				buffer,
				receivedAtMs: info.receivedAtMs,
				channels: info.channels,
				sampleRateHz: info.sampleRateHz,
				sampleCount: info.sampleCount,
				flags: info.flags
			};
			w.postMessage(msg, [buffer]);
		});
		this.#running = true;
	}

	stop(): void {
		this.#offFrame?.();
		this.#offHello?.();
		this.#offFrame = this.#offHello = null;
		this.#worker?.terminate();
		this.#worker = null;
		this.#running = false;
		for (const c of this.#captures.values()) c.reject(new Error('analysis stopped'));
		this.#captures.clear();
	}

	/** Change some settings; the worker rebuilds its analysers. */
	update(patch: Partial<AnalysisSettings>): void {
		const next = { ...this.#settings, ...patch };
		if (JSON.stringify(next) === JSON.stringify(this.#settings)) return;
		this.#settings = next;
		this.#plainSettings = $state.snapshot(this.#settings) as AnalysisSettings;
		this.#post({ type: 'settings', settings: this.#plainSettings });
	}

	/** The newest audio (steadiness window + one FFT frame) as a WAV. */
	capture(seconds?: number): Promise<CaptureResult> {
		const w = this.#worker;
		if (!w) return Promise.reject(new Error('analysis is not running'));
		const id = this.#nextCapture++;
		const rate = this.link.hello?.sampleRateHz ?? 48000;
		const s =
			seconds ?? Math.min(CAPTURE_SECONDS, this.#settings.steadinessWindowS + this.#settings.fftSize / rate);
		return new Promise((resolve, reject) => {
			this.#captures.set(id, { resolve, reject });
			this.#post({ type: 'capture', id, seconds: s });
		});
	}

	#post(msg: ToWorker): void {
		this.#worker?.postMessage(msg);
	}

	#configure(): void {
		const h = this.link.hello;
		if (!h) return;
		this.#channels = h.channels;
		this.#readouts = null;
		this.#post({
			type: 'config',
			sampleRateHz: h.sampleRateHz,
			channels: h.channels,
			fullScaleVolts: h.fullScaleVolts,
			settings: this.#plainSettings
		});
	}

	#onMessage(m: FromWorker): void {
		switch (m.type) {
			case 'axis': {
				this.#axisVersion = m.version;
				this.plot.displayHz = m.displayHz;
				this.plot.scopeMs = m.scopeMs;
				const nch = Math.min(2, this.#channels);
				this.plot.spectrum = Array.from({ length: nch }, () =>
					new Float64Array(m.displayHz.length).fill(NaN)
				);
				this.plot.scope = Array.from({ length: nch }, () => new Float64Array(m.scopeMs.length).fill(NaN));
				break;
			}
			case 'result':
				this.#onResult(m);
				break;
			case 'capture': {
				const c = this.#captures.get(m.id);
				this.#captures.delete(m.id);
				c?.resolve({
					wav: m.wav,
					sampleCount: m.sampleCount,
					sampleRateHz: m.sampleRateHz,
					channels: m.channels
				});
				break;
			}
			case 'capture-error': {
				const c = this.#captures.get(m.id);
				this.#captures.delete(m.id);
				c?.reject(new Error(m.message));
				break;
			}
			case 'error':
				this.#error = m.message;
				break;
		}
	}

	#onResult(m: WorkerResult): void {
		const recycle: ArrayBuffer[] = [];
		if (m.axisVersion === this.#axisVersion) {
			const nch = this.plot.spectrum.length;
			for (let c = 0; c < nch; c++) {
				const i = m.channelIndex.indexOf(c);
				const dst = this.plot.spectrum[c];
				const sdst = this.plot.scope[c];
				if (i < 0) {
					dst.fill(NaN);
					sdst.fill(NaN);
					continue;
				}
				const src = m.spectra[i];
				for (let k = 0; k < dst.length; k++) dst[k] = src[k];
				const ssrc = m.scope[i];
				for (let k = 0; k < sdst.length; k++) sdst[k] = ssrc[k];
			}
		}
		for (const a of m.spectra) recycle.push(a.buffer as ArrayBuffer);
		for (const a of m.scope) recycle.push(a.buffer as ArrayBuffer);
		// Hand the buffers back (transferred) so the worker reuses them for the next update.
		this.#worker?.postMessage({ type: 'recycle', buffers: recycle } satisfies ToWorker, recycle);

		const r: LiveReadouts = {
			n: m.n,
			sampleRateHz: m.sampleRateHz,
			fftSize: m.fftSize,
			binHz: m.binHz,
			analysisMs: m.analysisMs,
			channelIndex: m.channelIndex,
			results: m.results,
			balanceDb: m.balanceDb,
			crosstalkDb: m.crosstalkDb,
			steadiness: m.steadiness,
			scopeTriggered: m.scopeTriggered,
			settings: this.#plainSettings
		};
		for (const fn of this.#resultListeners) fn(r, m.frameReceivedAtMs);
		this.#readouts = r;
		this.#tick++;
	}
}
