// The browser's one connection to the bench bridge, shared by the bench and soak pages: token,
// connect and reconnect with backoff, token renewal over the open socket, hello/state,
// dropped-frame and frame-age bookkeeping, sample frames handed to a subscriber as raw
// ArrayBuffers, temperatures with restart tracking.
import {
	CLOSE_SESSION_ENDED,
	CLOSE_SESSION_ENDED_REASON,
	CONTROL_VERSION,
	ControlMessageSchema,
	FRAME_HEADER_BYTES,
	FRAME_MAGIC,
	bridgeStreamUrl,
	parseBridgeMessage,
	type ControlMessage,
	type GeneratorState,
	type HelloMessage,
	type SimulatorState,
	type StatsMessage,
	type TempReading
} from '$lib/bridge/protocol';

/** localStorage key: a per-browser bridge URL that wins over the shop setting (a bench PC, a test). */
export const BRIDGE_URL_OVERRIDE_KEY = 'benchlight-bridge-url';

export type LinkStatus = 'idle' | 'connecting' | 'connected' | 'reconnecting' | 'closed';

export interface FrameInfo {
	seq: number;
	channels: number;
	sampleRateHz: number;
	sampleCount: number;
	firstSampleIndex: number;
	flags: number;
	/** performance.now() when the frame arrived on the main thread. */
	receivedAtMs: number;
}

/**
 * Called with each sample frame. The buffer holds the whole frame (header included) and is
 * not used by the link afterwards, so the subscriber may transfer it to a worker; only one
 * subscriber may do that (later subscribers would see a detached buffer).
 */
export type FrameListener = (buffer: ArrayBuffer, info: FrameInfo) => void;

export interface TempsEvent {
	bootId: string;
	readings: TempReading[];
	/** True when these readings answer a `temps-after` backfill request. */
	backfill: boolean;
	/** Backfill answers: true on the last chunk (the request is fully answered). */
	complete?: boolean;
	/** Backfill answers: the oldest seq the bridge still holds; older readings are gone. */
	oldestSeq?: number | null;
}

/** The bridge restarted (new bootId) or the link came back after an outage: mark a gap. */
export interface RestartEvent {
	kind: 'restart' | 'reconnect';
	previousBootId: string | null;
	bootId: string;
	/** Highest temperature seq seen before the gap (null if none). */
	lastTempSeq: number | null;
}

/** A control message as callers write it: the link adds the version and an id. */
export type ControlInput = ControlMessage extends infer M
	? M extends ControlMessage
		? Omit<M, 'v' | 'id'>
		: never
	: never;

export interface BridgeLinkOptions {
	/** Where to fetch a token; default `/api/bridge-token`. */
	tokenUrl?: string;
	/** Request temps-after backfill automatically after a reconnect (soak page); default true. */
	autoBackfill?: boolean;
	/** Backoff bounds in ms. */
	minBackoffMs?: number;
	maxBackoffMs?: number;
}

interface TokenAnswer {
	token: string;
	expiresAt: number | string;
	bridgeUrl: string;
}

/** The app refused a token (401/403): retrying will not help until the user signs in again. */
class TokenRefusedError extends Error {}

/** Retry a failed renewal this often (ms), while the current token still has time left. */
const RENEW_RETRY_MS = 5000;

function readOverride(): string | null {
	try {
		const v = globalThis.localStorage?.getItem(BRIDGE_URL_OVERRIDE_KEY);
		return v && /^wss?:\/\/\S+$/.test(v) ? v : null;
	} catch {
		return null;
	}
}

export class BridgeLink {
	// Reactive, read through getters. Per-frame counters live in plain fields and are published
	// a few times a second, so a 100-frame/s stream does not churn Svelte's graph.
	#status = $state<LinkStatus>('idle');
	#error = $state<string | null>(null);
	#hello = $state.raw<HelloMessage | null>(null);
	#generator = $state.raw<GeneratorState | null>(null);
	#simulator = $state.raw<SimulatorState | null>(null);
	#loadOhms = $state<number | null>(null);
	#stats = $state.raw<StatsMessage | null>(null);
	#bridgeUrl = $state<string | null>(null);
	#attempt = $state(0);
	#nextRetryAtMs = $state<number | null>(null);
	#published = $state.raw({
		framesReceived: 0,
		droppedFrames: 0,
		discontinuities: 0,
		badFrames: 0,
		frameAgeMs: null as number | null,
		framesPerSecond: 0
	});
	#latestTemps = $state.raw<Record<string, TempReading>>({});
	#lastControlError = $state<string | null>(null);
	#sessionEnded = $state(false);

	#framesReceived = 0;
	#droppedFrames = 0;
	#discontinuities = 0;
	#badFrames = 0;
	#lastSeq = -1;
	#lastFrameAtMs: number | null = null;
	#rateWindowStartMs = 0;
	#rateWindowFrames = 0;
	#fps = 0;

	#ws: WebSocket | null = null;
	#wanted = false;
	#retryTimer: ReturnType<typeof setTimeout> | null = null;
	#tick: ReturnType<typeof setInterval> | null = null;
	#nextId = 1;
	#bootId: string | null = null;
	#lastTempSeq: number | null = null;
	#everConnected = false;
	// Token renewal: when the stream's token runs out (local clock), the pending renew's id, its timer.
	#tokenExpiresAtLocalMs: number | null = null;
	#renewId: number | null = null;
	#renewTimer: ReturnType<typeof setTimeout> | null = null;

	// Listener registries, not UI state: plain Sets on purpose.
	/* eslint-disable svelte/prefer-svelte-reactivity */
	#frameListeners = new Set<FrameListener>();
	#tempsListeners = new Set<(e: TempsEvent) => void>();
	#restartListeners = new Set<(e: RestartEvent) => void>();
	#helloListeners = new Set<(h: HelloMessage) => void>();
	/* eslint-enable svelte/prefer-svelte-reactivity */

	readonly #tokenUrl: string;
	readonly #autoBackfill: boolean;
	readonly #minBackoffMs: number;
	readonly #maxBackoffMs: number;

	constructor(options: BridgeLinkOptions = {}) {
		this.#tokenUrl = options.tokenUrl ?? '/api/bridge-token';
		this.#autoBackfill = options.autoBackfill ?? true;
		this.#minBackoffMs = options.minBackoffMs ?? 500;
		this.#maxBackoffMs = options.maxBackoffMs ?? 10_000;
	}

	get status(): LinkStatus {
		return this.#status;
	}
	get error(): string | null {
		return this.#error;
	}
	get hello(): HelloMessage | null {
		return this.#hello;
	}
	get generator(): GeneratorState | null {
		return this.#generator;
	}
	get simulator(): SimulatorState | null {
		return this.#simulator;
	}
	get loadOhms(): number | null {
		return this.#loadOhms;
	}
	get stats(): StatsMessage | null {
		return this.#stats;
	}
	get bridgeUrl(): string | null {
		return this.#bridgeUrl;
	}
	/** Reconnect attempt number (0 while connected). */
	get attempt(): number {
		return this.#attempt;
	}
	get nextRetryAtMs(): number | null {
		return this.#nextRetryAtMs;
	}
	get framesReceived(): number {
		return this.#published.framesReceived;
	}
	/** Frames missing from the sequence since this connection opened. */
	get droppedFrames(): number {
		return this.#published.droppedFrames;
	}
	get discontinuities(): number {
		return this.#published.discontinuities;
	}
	get badFrames(): number {
		return this.#published.badFrames;
	}
	/** Age of the newest frame in ms (null before the first). */
	get frameAgeMs(): number | null {
		return this.#published.frameAgeMs;
	}
	get framesPerSecond(): number {
		return this.#published.framesPerSecond;
	}
	get latestTemps(): Record<string, TempReading> {
		return this.#latestTemps;
	}
	get bootId(): string | null {
		return this.#bootId;
	}
	get lastTempSeq(): number | null {
		return this.#lastTempSeq;
	}
	get lastControlError(): string | null {
		return this.#lastControlError;
	}
	/**
	 * True when the bridge's input passes DC (it says so in its hello), so a DC-offset reading
	 * means something; false when it does not, or before the hello. Most audio interfaces block DC.
	 */
	get dcCoupled(): boolean {
		return this.#hello?.dcCoupled ?? false;
	}
	/** The sign-in behind the stream ended (token refused or not renewed): the page should say "sign in again". */
	get sessionEnded(): boolean {
		return this.#sessionEnded;
	}
	/** Unpublished counters, read synchronously (benchmarks). */
	counters(): { framesReceived: number; droppedFrames: number; lastFrameAtMs: number | null } {
		return {
			framesReceived: this.#framesReceived,
			droppedFrames: this.#droppedFrames,
			lastFrameAtMs: this.#lastFrameAtMs
		};
	}

	onFrame(fn: FrameListener): () => void {
		this.#frameListeners.add(fn);
		return () => this.#frameListeners.delete(fn);
	}
	onTemps(fn: (e: TempsEvent) => void): () => void {
		this.#tempsListeners.add(fn);
		return () => this.#tempsListeners.delete(fn);
	}
	onRestart(fn: (e: RestartEvent) => void): () => void {
		this.#restartListeners.add(fn);
		return () => this.#restartListeners.delete(fn);
	}
	onHello(fn: (h: HelloMessage) => void): () => void {
		this.#helloListeners.add(fn);
		return () => this.#helloListeners.delete(fn);
	}

	/** Start (or keep) the connection; reconnects with backoff until `disconnect()`. */
	connect(): void {
		if (this.#wanted) return;
		this.#wanted = true;
		this.#sessionEnded = false;
		this.#attempt = 0;
		this.#startTicker();
		void this.#open();
	}

	disconnect(): void {
		this.#wanted = false;
		this.#clearRetry();
		this.#clearRenew();
		if (this.#tick) clearInterval(this.#tick);
		this.#tick = null;
		const ws = this.#ws;
		this.#ws = null;
		if (ws) {
			ws.onopen = ws.onmessage = ws.onclose = ws.onerror = null;
			ws.close(1000, 'client closed');
		}
		this.#status = 'closed';
		this.#publish();
	}

	/** Drop the current socket and connect again now (e.g. after changing the URL override). */
	reconnectNow(): void {
		const ws = this.#ws;
		this.#ws = null;
		this.#clearRenew();
		if (ws) {
			ws.onopen = ws.onmessage = ws.onclose = ws.onerror = null;
			ws.close(1000, 'reconnecting');
		}
		this.#clearRetry();
		if (!this.#wanted) return this.connect();
		void this.#open();
	}

	/**
	 * Validate and send a control message. Returns the message id, or an error when the message
	 * does not pass the protocol's schema or the link is down (nothing is sent then).
	 */
	send(control: ControlInput): { ok: true; id: number } | { ok: false; error: string } {
		const id = this.#nextId++;
		const parsed = ControlMessageSchema.safeParse({ ...control, v: CONTROL_VERSION, id });
		if (!parsed.success) {
			const first = parsed.error.issues[0];
			return {
				ok: false,
				error: `invalid ${control.type} message: ${first?.path.join('.')} ${first?.message}`
			};
		}
		const ws = this.#ws;
		if (!ws || ws.readyState !== WebSocket.OPEN) return { ok: false, error: 'not connected to the bridge' };
		ws.send(JSON.stringify(parsed.data));
		return { ok: true, id };
	}

	/** Ask for stored temperature readings after `seq` (answers arrive as backfill temps events). */
	requestTempsAfter(seq: number): boolean {
		return this.send({ type: 'temps-after', seq }).ok;
	}

	async #fetchToken(): Promise<TokenAnswer> {
		const res = await fetch(this.#tokenUrl, { headers: { accept: 'application/json' }, cache: 'no-store' });
		if (!res.ok) {
			if (res.status === 401) throw new TokenRefusedError(CLOSE_SESSION_ENDED_REASON);
			let msg = `token request failed (${res.status})`;
			try {
				const j = (await res.json()) as { message?: string };
				if (j.message) msg = `${msg}: ${j.message}`;
			} catch {
				/* keep the status line */
			}
			throw res.status === 403 ? new TokenRefusedError(msg) : new Error(msg);
		}
		const j = (await res.json()) as Partial<TokenAnswer>;
		if (typeof j.token !== 'string' || typeof j.bridgeUrl !== 'string')
			throw new Error('token answer is malformed');
		return j as TokenAnswer;
	}

	async #open(): Promise<void> {
		if (!this.#wanted) return;
		this.#status = this.#everConnected || this.#attempt > 0 ? 'reconnecting' : 'connecting';
		let answer: TokenAnswer;
		try {
			answer = await this.#fetchToken();
		} catch (e) {
			if (e instanceof TokenRefusedError) return this.#endSession(e.message);
			this.#error = e instanceof Error ? e.message : String(e);
			this.#scheduleRetry();
			return;
		}
		if (!this.#wanted) return;
		const base = readOverride() ?? answer.bridgeUrl;
		this.#bridgeUrl = base;
		let ws: WebSocket;
		try {
			ws = new WebSocket(bridgeStreamUrl(base, answer.token));
		} catch (e) {
			this.#error = `bad bridge URL ${base}: ${e instanceof Error ? e.message : String(e)}`;
			this.#scheduleRetry();
			return;
		}
		ws.binaryType = 'arraybuffer';
		this.#ws = ws;
		ws.onmessage = (ev) => {
			if (typeof ev.data === 'string') this.#onText(ev.data);
			else if (ev.data instanceof ArrayBuffer) this.#onBinary(ev.data);
		};
		ws.onclose = (ev) => {
			if (this.#ws !== ws) return;
			this.#ws = null;
			this.#clearRenew();
			// The bridge ended the stream because its token ran out unrenewed: reconnecting
			// would only be refused again; the user has to sign in.
			if (ev.code === CLOSE_SESSION_ENDED) return this.#endSession(ev.reason || CLOSE_SESSION_ENDED_REASON);
			if (ev.code !== 1000 || this.#wanted) {
				this.#error = ev.reason
					? `bridge closed the link: ${ev.reason} (${ev.code})`
					: `link closed (${ev.code})`;
			}
			this.#scheduleRetry();
		};
		ws.onerror = () => {
			// The close event that follows carries the details; browsers hide the cause of a refused upgrade.
			if (this.#status !== 'connected') this.#error = `cannot reach the bridge at ${base}`;
		};
	}

	#scheduleRetry(): void {
		if (!this.#wanted) {
			this.#status = 'closed';
			return;
		}
		this.#status = 'reconnecting';
		this.#attempt++;
		const base = Math.min(this.#maxBackoffMs, this.#minBackoffMs * 2 ** Math.min(10, this.#attempt - 1));
		// ±20 % jitter so several bench PCs do not hammer a restarting bridge in step.
		const delay = Math.round(base * (0.8 + 0.4 * Math.random()));
		this.#nextRetryAtMs = Date.now() + delay;
		this.#clearRetry();
		this.#retryTimer = setTimeout(() => {
			this.#retryTimer = null;
			this.#nextRetryAtMs = null;
			void this.#open();
		}, delay);
	}

	#clearRetry(): void {
		if (this.#retryTimer) clearTimeout(this.#retryTimer);
		this.#retryTimer = null;
		this.#nextRetryAtMs = null;
	}

	/** Stop for good (until connect()): the session behind the token is gone. */
	#endSession(message: string): void {
		this.#sessionEnded = true;
		this.#error = message;
		this.#wanted = false;
		this.#clearRetry();
		this.#clearRenew();
		const ws = this.#ws;
		this.#ws = null;
		if (ws) {
			ws.onopen = ws.onmessage = ws.onclose = ws.onerror = null;
			ws.close(1000, 'session ended');
		}
		this.#status = 'closed';
		this.#publish();
	}

	#clearRenew(): void {
		if (this.#renewTimer) clearTimeout(this.#renewTimer);
		this.#renewTimer = null;
		this.#renewId = null;
		this.#tokenExpiresAtLocalMs = null;
	}

	/**
	 * The bridge told us when the stream's token runs out (on its clock, with its time now):
	 * renew after a third of the time left, leaving room for retries and throttled timers in a
	 * background tab.
	 */
	#tokenLifetime(expiresAtMs: number | undefined, serverTimeMs: number): void {
		if (this.#renewTimer) clearTimeout(this.#renewTimer);
		this.#renewTimer = null;
		this.#renewId = null;
		if (expiresAtMs === undefined) {
			this.#tokenExpiresAtLocalMs = null; // a bridge that does not expire streams
			return;
		}
		const leftMs = Math.max(0, expiresAtMs - serverTimeMs);
		this.#tokenExpiresAtLocalMs = Date.now() + leftMs;
		this.#scheduleRenew(Math.max(1000, leftMs / 3));
	}

	#scheduleRenew(delayMs: number): void {
		if (this.#renewTimer) clearTimeout(this.#renewTimer);
		const ws = this.#ws;
		this.#renewTimer = setTimeout(() => {
			this.#renewTimer = null;
			if (ws) void this.#renew(ws);
		}, delayMs);
	}

	/** Fetch a fresh token and present it over the open socket; retry while time is left. */
	async #renew(ws: WebSocket): Promise<void> {
		if (this.#ws !== ws || this.#tokenExpiresAtLocalMs === null) return;
		const retry = () => {
			if (this.#ws !== ws || this.#tokenExpiresAtLocalMs === null) return;
			const leftMs = this.#tokenExpiresAtLocalMs - Date.now();
			// Out of time: the bridge closes the stream and onclose reports it.
			if (leftMs > 0) this.#scheduleRenew(Math.min(RENEW_RETRY_MS, Math.max(250, leftMs / 4)));
		};
		let answer: TokenAnswer;
		try {
			answer = await this.#fetchToken();
		} catch (e) {
			if (this.#ws !== ws) return;
			if (e instanceof TokenRefusedError) return this.#endSession(e.message);
			return retry();
		}
		if (this.#ws !== ws) return;
		const sent = this.send({ type: 'renew', token: answer.token });
		if (!sent.ok) return retry();
		this.#renewId = sent.id;
		// If no answer comes, try again; a `renewed` answer replaces this timer.
		retry();
	}

	#onText(text: string): void {
		const parsed = parseBridgeMessage(text);
		if (!parsed.ok) return; // Unknown or newer messages are ignored, not fatal.
		const m = parsed.message;
		switch (m.type) {
			case 'hello': {
				const previous = this.#bootId;
				const wasConnected = this.#everConnected;
				this.#bootId = m.bootId;
				this.#hello = m;
				this.#generator = m.generator;
				this.#simulator = m.simulator ?? null;
				this.#loadOhms = m.simulator?.loadOhms ?? null;
				this.#status = 'connected';
				this.#error = null;
				this.#attempt = 0;
				this.#everConnected = true;
				this.#lastSeq = -1;
				this.#droppedFrames = 0;
				this.#discontinuities = 0;
				this.#tokenLifetime(m.tokenExpiresAtMs, m.serverTimeMs);
				for (const fn of this.#helloListeners) fn(m);
				if (wasConnected) {
					const ev: RestartEvent = {
						kind: previous !== null && previous !== m.bootId ? 'restart' : 'reconnect',
						previousBootId: previous,
						bootId: m.bootId,
						lastTempSeq: this.#lastTempSeq
					};
					for (const fn of this.#restartListeners) fn(ev);
				}
				if (this.#autoBackfill && this.#lastTempSeq !== null && this.#tempsListeners.size > 0) {
					this.requestTempsAfter(this.#lastTempSeq);
				}
				this.#publish();
				break;
			}
			case 'temps': {
				if (m.bootId !== this.#bootId && this.#bootId !== null && !m.backfill) {
					// Readings from a different boot than the hello we hold: treat as a restart.
					const ev: RestartEvent = {
						kind: 'restart',
						previousBootId: this.#bootId,
						bootId: m.bootId,
						lastTempSeq: this.#lastTempSeq
					};
					this.#bootId = m.bootId;
					for (const fn of this.#restartListeners) fn(ev);
				}
				if (m.readings.length === 0 && !m.backfill) break;
				const latest = { ...this.#latestTemps };
				for (const r of m.readings) {
					if (this.#lastTempSeq === null || r.seq > this.#lastTempSeq) this.#lastTempSeq = r.seq;
					const prev = latest[r.probe];
					if (!prev || r.seq > prev.seq) latest[r.probe] = r;
				}
				this.#latestTemps = latest;
				const ev: TempsEvent = {
					bootId: m.bootId,
					readings: m.readings,
					backfill: m.backfill ?? false,
					complete: m.complete,
					oldestSeq: m.oldestSeq
				};
				for (const fn of this.#tempsListeners) fn(ev);
				break;
			}
			case 'state':
				this.#generator = m.generator;
				if (m.simulator) this.#simulator = m.simulator;
				this.#loadOhms = m.loadOhms;
				break;
			case 'stats':
				this.#stats = m;
				break;
			case 'renewed':
				if (m.replyTo === this.#renewId) this.#tokenLifetime(m.tokenExpiresAtMs, m.serverTimeMs);
				break;
			case 'error':
				this.#lastControlError = m.issues?.length
					? `${m.message}: ${m.issues.map((i) => `${i.path} ${i.message}`).join('; ')}`
					: m.message;
				break;
		}
	}

	#onBinary(buffer: ArrayBuffer): void {
		const now = performance.now();
		if (buffer.byteLength < FRAME_HEADER_BYTES) {
			this.#badFrames++;
			return;
		}
		// Read the header straight from the bytes; decoding the payload is the worker's job.
		const dv = new DataView(buffer, 0, FRAME_HEADER_BYTES);
		if (dv.getUint32(0, true) !== FRAME_MAGIC) {
			this.#badFrames++;
			return;
		}
		const info: FrameInfo = {
			channels: dv.getUint16(6, true),
			seq: dv.getUint32(8, true),
			sampleRateHz: dv.getUint32(12, true),
			firstSampleIndex: dv.getFloat64(16, true),
			sampleCount: dv.getUint32(24, true),
			flags: dv.getUint32(28, true),
			receivedAtMs: now
		};
		if (this.#lastSeq >= 0) {
			const expected = (this.#lastSeq + 1) >>> 0;
			if (info.seq !== expected) {
				const gap = (info.seq - expected) >>> 0;
				// A huge "gap" is a sequence restart, not 4 billion lost frames.
				if (gap < 0x7fffffff) this.#droppedFrames += gap;
			}
		}
		if (info.flags & 1) this.#discontinuities++;
		this.#lastSeq = info.seq;
		this.#framesReceived++;
		this.#rateWindowFrames++;
		this.#lastFrameAtMs = now;
		for (const fn of this.#frameListeners) fn(buffer, info);
	}

	#startTicker(): void {
		if (this.#tick) return;
		this.#rateWindowStartMs = performance.now();
		this.#tick = setInterval(() => this.#publish(), 250);
	}

	#publish(): void {
		const now = performance.now();
		const span = now - this.#rateWindowStartMs;
		if (span >= 1000) {
			this.#fps = (this.#rateWindowFrames * 1000) / span;
			this.#rateWindowFrames = 0;
			this.#rateWindowStartMs = now;
		}
		this.#published = {
			framesReceived: this.#framesReceived,
			droppedFrames: this.#droppedFrames,
			discontinuities: this.#discontinuities,
			badFrames: this.#badFrames,
			frameAgeMs: this.#lastFrameAtMs === null ? null : Math.max(0, now - this.#lastFrameAtMs),
			framesPerSecond: this.#fps
		};
	}
}
