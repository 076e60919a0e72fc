// The live state of one heat-soak run in the browser: takes temperatures from the shared
// BridgeLink, keeps every reading until the server has acknowledged it (memory + localStorage),
// resumes after a reload with backfill from the server and the bridge, drives the generator,
// watches the limits (alarm, generator off, abort) and finishes the run at its duration.
import type { BridgeLink, RestartEvent, TempsEvent } from './bridge-link.svelte';
import { SoakAlarmSound } from './soak-alarm';
import { GENERATOR_MAX_VRMS, type HelloMessage } from '$lib/bridge/protocol';
import {
	LiveBreachWatch,
	findGaps,
	soakSeconds,
	type Breach,
	type Gap,
	type SoakReadingIn,
	type ThdnSample
} from '$lib/soak/verdict';
import type { SoakRunDetail, SoakRunView } from '$lib/soak/types';
import type { CustomDrive, SoakPresetId } from '$lib/soak/presets';
import type { SoakLimits } from '$lib/soak/soak-limits';
import { LiveAnalysis, type LiveReadouts } from './live-analysis.svelte';

export type SoakPhase = 'idle' | 'loading' | 'starting' | 'running' | 'ending' | 'ended' | 'error';

export interface StoredReading extends SoakReadingIn {
	bootId: string | null;
}

interface PendingEvent {
	kind: 'gap' | 'thdn' | 'generator' | 'note';
	at: number;
	key: string;
	detail: Record<string, unknown>;
}

type EndAction = { kind: 'finish' } | { kind: 'abort'; reason: string; at: number; breach?: Breach };

export interface Measured {
	levelVrms: (number | null)[];
	powerW: (number | null)[];
	thdnPercent: (number | null)[];
	atMs: number;
}

export interface StartParams {
	preset: SoakPresetId;
	custom?: CustomDrive;
	limits: Partial<SoakLimits>;
	/** The technician confirmed the one-third-power caution (old or unrestored units). */
	confirmHeat?: boolean;
}

const key = (r: { probe: string; seq: number }) => `${r.probe}:${r.seq}`;
const store = {
	pending: (id: number) => `benchlight-soak-pending:${id}`,
	events: (id: number) => `benchlight-soak-events:${id}`,
	end: (id: number) => `benchlight-soak-end:${id}`,
	gen: (id: number) => `benchlight-soak-gen:${id}`
};

function readStore<T>(k: string): T | null {
	try {
		const v = localStorage.getItem(k);
		return v ? (JSON.parse(v) as T) : null;
	} catch {
		return null;
	}
}
function writeStore(k: string, v: unknown): boolean {
	try {
		if (v === null) localStorage.removeItem(k);
		else localStorage.setItem(k, JSON.stringify(v));
		return true;
	} catch {
		// Quota or privacy mode: the readings stay in memory and keep being retried.
		return false;
	}
}

const UPLOAD_BATCH = 500;
const MAX_BACKOFF_MS = 15_000;
/** Output level within this fraction of the target counts as on target. */
const LEVEL_TOLERANCE = 0.03;
const THDN_SAMPLE_EVERY_MS = 10_000;
/** Wall seconds past the planned end before the bridge's deadman stops the drive on its own. */
const DEADMAN_MARGIN_S = 30;

async function postJson(url: string, body: unknown): Promise<Response> {
	return fetch(url, {
		method: 'POST',
		headers: { 'content-type': 'application/json', accept: 'application/json' },
		body: JSON.stringify(body ?? {})
	});
}

async function messageOf(res: Response): Promise<string> {
	try {
		const j = (await res.json()) as { message?: string };
		return j.message ?? `HTTP ${res.status}`;
	} catch {
		return `HTTP ${res.status}`;
	}
}

export class SoakSession {
	#phase = $state<SoakPhase>('idle');
	#detail = $state.raw<SoakRunDetail | null>(null);
	#error = $state<string | null>(null);
	#nowMs = $state(Date.now());
	#latest = $state.raw<Record<string, StoredReading>>({});
	#version = $state(0);
	#pendingCount = $state(0);
	#pendingEvents = $state(0);
	#uploadError = $state<string | null>(null);
	#rejectedCount = $state(0);
	#breach = $state.raw<Breach | null>(null);
	#alarmActive = $state(false);
	#alarmSounding = $state(false);
	#generatorLevelVrms = $state<number | null>(null);
	#measured = $state.raw<Measured | null>(null);
	#restarts = $state.raw<RestartEvent[]>([]);

	readonly #link: BridgeLink;
	readonly #jobId: number;
	readonly #alarm = new SoakAlarmSound();
	// Deliberately not reactive: thousands of readings; views follow the `version` counter instead.
	// eslint-disable-next-line svelte/prefer-svelte-reactivity
	#all = new Map<string, StoredReading>();
	// eslint-disable-next-line svelte/prefer-svelte-reactivity
	#pending = new Map<string, StoredReading>();
	/** The same readings ordered by seq, kept as they arrive (inserted in place when late). */
	#sorted: StoredReading[] = [];
	/** The live limit check over the run's readings; built on the first check. */
	#watch: { runId: number; watch: LiveBreachWatch } | null = null;
	#events: PendingEvent[] = [];
	#thdn: ThdnSample[] = [];
	#endAction: EndAction | null = null;
	#unsubs: (() => void)[] = [];
	#tick: ReturnType<typeof setInterval> | null = null;
	#uploading = false;
	#backoffMs = 1000;
	#nextUploadAt = 0;
	#persistDue = false;
	#ending = false;
	#wantDrive = false;
	#lastDriveSentAt = 0;
	#lastOffSentAt = 0;
	#offConfirmed = false;
	#lastServoAt = 0;
	#initialLevelVrms: number | null = null;
	#lastThdnPostAt = 0;
	#helloSeen = false;
	/** A temps-after request whose last chunk has not arrived yet. */
	#backfillOutstanding = false;
	#analysis: LiveAnalysis | null = null;
	#disposed = false;

	constructor(link: BridgeLink, jobId: number) {
		this.#link = link;
		this.#jobId = jobId;
	}

	// ── read-only state ──────────────────────────────────────────────────────

	get phase(): SoakPhase {
		return this.#phase;
	}
	get detail(): SoakRunDetail | null {
		return this.#detail;
	}
	get run(): SoakRunView | null {
		return this.#detail?.run ?? null;
	}
	get limits(): SoakLimits | null {
		return this.#detail?.limits ?? null;
	}
	get error(): string | null {
		return this.#error;
	}
	get nowMs(): number {
		return this.#nowMs;
	}
	/** Soak seconds since the start (thermal time: × the bridge's time scale). */
	get elapsedS(): number {
		const run = this.run;
		if (!run) return 0;
		const end = run.endedAt ?? this.#nowMs;
		const s = Math.max(0, soakSeconds(end, { startedAtMs: run.startedAt, timeScale: run.timeScale }));
		// A finished run ran its duration, however late the page came back to close it.
		return run.status === 'passed' || run.status === 'failed' ? Math.min(s, run.durationS) : s;
	}
	get remainingS(): number {
		const run = this.run;
		return run ? Math.max(0, run.durationS - this.elapsedS) : 0;
	}
	get latest(): Record<string, StoredReading> {
		return this.#latest;
	}
	/** Bumped whenever the set of readings changes (the chart follows it). */
	get version(): number {
		return this.#version;
	}
	get readingCount(): number {
		void this.#version;
		return this.#all.size;
	}
	/** Readings not yet acknowledged by the server. */
	get pendingCount(): number {
		return this.#pendingCount;
	}
	get pendingEvents(): number {
		return this.#pendingEvents;
	}
	get uploadError(): string | null {
		return this.#uploadError;
	}
	get rejectedCount(): number {
		return this.#rejectedCount;
	}
	get breach(): Breach | null {
		return this.#breach;
	}
	get alarmActive(): boolean {
		return this.#alarmActive;
	}
	get alarmSounding(): boolean {
		return this.#alarmSounding;
	}
	get generatorLevelVrms(): number | null {
		return this.#generatorLevelVrms;
	}
	get measured(): Measured | null {
		return this.#measured;
	}
	get restarts(): RestartEvent[] {
		return this.#restarts;
	}

	/** Every reading, ordered by seq (a fresh array, so derived views see a change). */
	readings(): StoredReading[] {
		return this.#sorted.slice();
	}

	/** Keep a reading (once per probe and seq); true when it is new. */
	#store(r: StoredReading): boolean {
		const k = key(r);
		const known = this.#all.get(k);
		if (known) {
			// The same reading again (the server's copy): same values, keep the one object everyone holds.
			Object.assign(known, r);
			return false;
		}
		this.#all.set(k, r);
		const list = this.#sorted;
		if (!list.length || list[list.length - 1].seq <= r.seq) list.push(r);
		else {
			let lo = 0;
			let hi = list.length;
			while (lo < hi) {
				const mid = (lo + hi) >>> 1;
				if (list[mid].seq <= r.seq) lo = mid + 1;
				else hi = mid;
			}
			list.splice(lo, 0, r);
		}
		this.#watch?.watch.add(r);
		return true;
	}

	/** Breaks in the record (bridge restarts, long silences), from the readings themselves. */
	gaps(): Gap[] {
		void this.#version;
		return findGaps(this.readings());
	}

	// ── lifecycle ────────────────────────────────────────────────────────────

	/** Open an existing run: a running one resumes (backfill, generator, limits), an ended one is shown. */
	async open(runId: number): Promise<void> {
		this.#phase = 'loading';
		const detail = await this.#fetchDetail(runId);
		if (!detail) return;
		this.#detail = detail;
		await this.#loadServerReadings(runId);
		if (detail.run.status !== 'running') {
			this.#phase = 'ended';
			this.#clearStore(runId);
			this.#bump();
			return;
		}
		this.#thdn = detail.events
			.filter((e) => e.kind === 'thdn')
			.map((e) => ({ t: e.at, thdnPercent: (e.detail as { thdnPercent: number }).thdnPercent }));
		// Readings the last page had not yet got acknowledged.
		for (const r of readStore<StoredReading[]>(store.pending(runId)) ?? []) {
			if (this.#store(r)) this.#pending.set(key(r), r);
		}
		this.#events = readStore<PendingEvent[]>(store.events(runId)) ?? [];
		this.#endAction = readStore<EndAction>(store.end(runId));
		this.#initialLevelVrms = readStore<number>(store.gen(runId));
		this.#generatorLevelVrms = this.#initialLevelVrms;
		this.#syncCounts();
		this.#bump();
		this.#phase = 'running';
		// Keep driving the unit unless the last page was already ending the run.
		this.#wantDrive = !this.#endAction;
		this.#attach();
		if (this.#endAction) void this.#end(this.#endAction);
		else this.#checkLimits();
	}

	/** Create the run on the server, then drive the unit through the bridge. */
	async start(params: StartParams): Promise<void> {
		const hello = this.#link.hello;
		if (!hello || this.#link.status !== 'connected') {
			this.#error = 'Connect to the bridge first: the generator and the probes are driven through it';
			return;
		}
		// A click started this: the only moment browsers let a page unlock audio for the alarm.
		this.#alarm.unlock();
		this.#phase = 'starting';
		this.#error = null;
		const res = await postJson(`/api/jobs/${this.#jobId}/soak-runs`, {
			preset: params.preset,
			...(params.preset === 'custom' ? { custom: params.custom } : {}),
			limits: params.limits,
			...(params.confirmHeat ? { confirmHeat: true } : {}),
			bridge: {
				bootId: hello.bootId,
				lastSeq: this.#link.lastTempSeq ?? hello.lastTempSeq,
				// The server accepts an accelerated clock only from the simulator, so it needs the sources.
				source: hello.source,
				temps: hello.temps,
				timeScale: hello.timeScale
			}
		}).catch(() => null);
		if (!res || !res.ok) {
			this.#error = res ? await messageOf(res) : 'The server did not answer; nothing was started';
			this.#phase = 'idle';
			return;
		}
		const { id } = (await res.json()) as { id: number };
		const detail = await this.#fetchDetail(id);
		if (!detail) return;
		this.#detail = detail;
		this.#phase = 'running';
		this.#attach();
		this.#wantDrive = true;
		this.#drive();
	}

	/** Stop early at the technician's request: generator off, run aborted with the reason. */
	async stop(reason = 'Stopped by the technician'): Promise<void> {
		if (this.#phase !== 'running') return;
		await this.#end({ kind: 'abort', reason, at: Date.now() });
	}

	/** A click anywhere on the page: lets the alarm sound after a reload. */
	unlockAudio(): void {
		this.#alarm.unlock();
		if (this.#alarmActive && !this.#alarm.playing) this.#alarm.start();
	}

	silenceAlarm(): void {
		this.#alarm.stop();
		this.#alarmSounding = false;
	}

	dismissAlarm(): void {
		this.silenceAlarm();
		this.#alarmActive = false;
	}

	dispose(): void {
		this.#disposed = true;
		for (const u of this.#unsubs) u();
		this.#unsubs = [];
		if (this.#tick) clearInterval(this.#tick);
		this.#tick = null;
		this.#persist();
		this.#alarm.dispose();
		this.#analysis?.stop();
		this.#analysis = null;
	}

	// ── wiring ───────────────────────────────────────────────────────────────

	#attach(): void {
		if (this.#tick) return;
		this.#unsubs.push(
			this.#link.onTemps((e) => this.#onTemps(e)),
			this.#link.onRestart((e) => this.#onRestart(e)),
			this.#link.onHello((h) => this.#onHello(h))
		);
		this.#tick = setInterval(() => this.#onTick(), 250);
		this.#startAnalysis();
		// Already connected (the page connected before the run existed): catch up now.
		if (this.#link.hello && this.#link.status === 'connected') this.#onHello(this.#link.hello);
		this.#link.connect();
	}

	/** Output level, power and THD+N from the shared analysis worker (the bench page's LiveAnalysis). */
	#startAnalysis(): void {
		const run = this.run;
		if (this.#analysis || !run || typeof Worker === 'undefined') return;
		// A soak needs level, power and THD+N a couple of times a second, not a fast spectrum.
		const a = new LiveAnalysis(this.#link, {
			fftSize: 16384,
			maxUpdatesPerS: 2,
			loadOhms: run.loadOhms,
			channels: 'both'
		});
		this.#unsubs.push(a.onResult((r) => this.#onAnalysis(r)));
		a.start();
		this.#analysis = a;
	}

	#onAnalysis(r: LiveReadouts): void {
		const levelVrms: (number | null)[] = [null, null];
		const powerW: (number | null)[] = [null, null];
		const thdnPercent: (number | null)[] = [null, null];
		r.results.forEach((res, i) => {
			const ch = r.channelIndex[i];
			if (ch > 1) return;
			levelVrms[ch] = res.levelVrms;
			powerW[ch] = res.powerW ?? null;
			thdnPercent[ch] = res.thdnPercent;
		});
		this.#measured = { levelVrms, powerW, thdnPercent, atMs: Date.now() };
		this.#servo();
		this.#watchThdn();
	}

	#onHello(h: HelloMessage): void {
		if (this.#phase !== 'running' && this.#phase !== 'ending') return;
		const last = this.#sorted.at(-1);
		// After a reload the link has no history: a different boot than our last reading is a restart we slept through.
		if (!this.#helloSeen && last && last.bootId && last.bootId !== h.bootId) {
			this.#onRestart({
				kind: 'restart',
				previousBootId: last.bootId,
				bootId: h.bootId,
				lastTempSeq: last.seq
			});
		}
		this.#helloSeen = true;
		const run = this.run;
		const after = last?.seq ?? run?.startSeq ?? -1;
		if (this.#link.requestTempsAfter(after)) this.#backfillOutstanding = true;
	}

	#onRestart(e: RestartEvent): void {
		if (e.kind !== 'restart' || !this.run) return;
		this.#restarts = [...this.#restarts, e];
		this.#queueEvent({
			kind: 'gap',
			at: Date.now(),
			key: `restart:${e.bootId}`,
			detail: {
				reason: 'bridge-restart',
				fromSeq: e.lastTempSeq,
				fromBootId: e.previousBootId,
				toBootId: e.bootId
			}
		});
		// The new bridge starts with its generator off: drive again (the tick does it once connected).
		this.#lastDriveSentAt = 0;
	}

	#onTemps(e: TempsEvent): void {
		if (e.backfill && e.complete !== false) this.#backfillOutstanding = false;
		const run = this.run;
		if (!run || (this.#phase !== 'running' && this.#phase !== 'ending')) return;
		// A lookup local to this call, not state.
		// eslint-disable-next-line svelte/prefer-svelte-reactivity
		const probes = new Set(run.probes);
		let added = 0;
		const latest = { ...this.#latest };
		for (const r of e.readings) {
			if (!probes.has(r.probe)) continue;
			// Readings after the bridge's seq at the start belong to the run; without that seq, by time.
			if (run.startSeq !== null ? r.seq <= run.startSeq : r.t < run.startedAt) continue;
			const k = key(r);
			if (this.#all.has(k)) continue;
			const stored: StoredReading = {
				probe: r.probe,
				seq: r.seq,
				t: r.t,
				celsius: r.celsius,
				bootId: e.bootId
			};
			this.#store(stored);
			if (!this.#endedOnServer()) this.#pending.set(k, stored);
			added++;
			const prev = latest[r.probe];
			if (!prev || r.seq > prev.seq) latest[r.probe] = stored;
		}
		if (!added) return;
		this.#latest = latest;
		this.#persistDue = true;
		this.#syncCounts();
		this.#bump();
		this.#checkLimits();
	}

	#endedOnServer(): boolean {
		return this.#detail?.run.status !== 'running';
	}

	#onTick(): void {
		this.#nowMs = Date.now();
		if (this.#persistDue) this.#persist();
		void this.#uploadSome();
		const run = this.run;
		if (!run) return;
		if (this.#phase === 'running' && !this.#ending && this.elapsedS >= run.durationS) {
			void this.#end({ kind: 'finish' });
		}
		const connected = this.#link.status === 'connected';
		const gen = this.#link.generator;
		if (!connected) return;
		if (!this.#wantDrive) {
			// Keep telling the bridge until its state shows the generator off (then leave the bench alone).
			if ((this.#ending || this.#phase === 'ended' || this.#breach) && !this.#offConfirmed) {
				if (gen?.kind === 'off') this.#offConfirmed = true;
				else if (Date.now() - this.#lastOffSentAt > 1000) this.#sendOff();
			}
			return;
		}
		if (gen?.kind === 'off' && Date.now() - this.#lastDriveSentAt > 2000) this.#drive();
	}

	// ── drive ────────────────────────────────────────────────────────────────

	/** The generator level that should give the target output: the simulator's gain when known. */
	#estimateLevel(): number {
		const run = this.run as SoakRunView;
		const sim = this.#link.simulator ?? this.#link.hello?.simulator ?? null;
		// Real hardware: start 40 dB below the target and let the level servo bring it up.
		const gainDb = sim ? sim.volumeDb : 40;
		return Math.min(GENERATOR_MAX_VRMS, run.driveVrms / 10 ** (gainDb / 20));
	}

	#drive(): void {
		const run = this.run;
		if (!run || !this.#wantDrive) return;
		const level = this.#generatorLevelVrms ?? this.#estimateLevel();
		this.#initialLevelVrms ??= level;
		this.#generatorLevelVrms = level;
		writeStore(store.gen(run.id), level);
		this.#lastDriveSentAt = Date.now();
		const drive = run.channels.length === 2 ? 'both' : run.channels[0];
		this.#link.send({ type: 'load', loadOhms: run.loadOhms });
		// The bridge stops the drive by itself shortly after the planned end, even if this page is gone.
		const offAfterS = Math.max(1, this.remainingS / run.timeScale + DEADMAN_MARGIN_S);
		const sent = this.#link.send({
			type: 'generator',
			generator: { kind: 'sine', frequencyHz: run.frequencyHz, levelVrms: level, drive },
			offAfterS
		});
		if (sent.ok) {
			this.#queueEvent({
				kind: 'generator',
				at: Date.now(),
				key: `on:${this.#lastDriveSentAt}`,
				detail: { state: 'on', levelVrms: level, frequencyHz: run.frequencyHz }
			});
		}
	}

	#sendOff(): void {
		this.#lastOffSentAt = Date.now();
		const sent = this.#link.send({ type: 'generator', generator: { kind: 'off' } });
		if (sent.ok && this.run) {
			this.#queueEvent({
				kind: 'generator',
				at: Date.now(),
				key: `off:${this.#lastOffSentAt}`,
				detail: { state: 'off' }
			});
		}
	}

	#driveOff(): void {
		this.#wantDrive = false;
		if (this.#link.status === 'connected') this.#sendOff();
	}

	/** Hold the output at the target: correct the generator by the measured level (bounded steps). */
	#servo(): void {
		const run = this.run;
		const m = this.#measured;
		if (!run || !m || !this.#wantDrive || this.#link.generator?.kind !== 'sine') return;
		if (Date.now() - this.#lastServoAt < 1500 || Date.now() - this.#lastDriveSentAt < 1500) return;
		const driven = run.channels
			.map((c) => m.levelVrms[c === 'left' ? 0 : 1])
			.filter((v): v is number => v !== null);
		if (!driven.length) return;
		const measured = driven.reduce((a, b) => a + b, 0) / driven.length;
		if (measured < 1e-3) return;
		const ratio = run.driveVrms / measured;
		if (Math.abs(ratio - 1) <= LEVEL_TOLERANCE) return;
		const current = this.#generatorLevelVrms ?? this.#estimateLevel();
		// Never more than 12 dB above the first estimate: a dead channel must not be chased to full scale.
		const ceiling = Math.min(GENERATOR_MAX_VRMS, (this.#initialLevelVrms ?? current) * 4);
		const next = Math.min(ceiling, current * Math.min(2, Math.max(0.5, ratio)));
		if (Math.abs(next - current) / current < 0.005) return;
		this.#lastServoAt = Date.now();
		this.#generatorLevelVrms = next;
		this.#drive();
	}

	/** THD+N: sampled into the record every few seconds once the output is on target, and judged. */
	#watchThdn(): void {
		const run = this.run;
		const m = this.#measured;
		if (!run || !m || !this.#wantDrive || this.#phase !== 'running') return;
		if (!this.onTarget) return;
		const values = run.channels
			.map((c) => ({
				channel: c,
				thdn: m.thdnPercent[c === 'left' ? 0 : 1],
				powerW: m.powerW[c === 'left' ? 0 : 1],
				vrms: m.levelVrms[c === 'left' ? 0 : 1]
			}))
			.filter((v) => v.thdn !== null);
		if (!values.length) return;
		const worst = values.reduce((a, b) => ((b.thdn as number) > (a.thdn as number) ? b : a));
		const ceilingDb = this.limits?.thdnCeilingDb ?? null;
		const t = Date.now();
		const over = ceilingDb !== null && (worst.thdn as number) > 100 * 10 ** (ceilingDb / 20);
		if (!over && t - this.#lastThdnPostAt < THDN_SAMPLE_EVERY_MS) return;
		this.#lastThdnPostAt = t;
		this.#recordThdn(t, worst.channel, worst.thdn as number, worst.powerW, worst.vrms);
		if (over) this.#checkLimits();
	}

	#recordThdn(
		t: number,
		channel: string,
		thdnPercent: number,
		outputW: number | null,
		outputVrms: number | null
	): void {
		this.#thdn.push({ t, thdnPercent, channel });
		this.#queueEvent({
			kind: 'thdn',
			at: t,
			key: `thdn:${t}`,
			detail: { thdnPercent, outputW, outputVrms, channel }
		});
	}

	/** True when the measured output is within tolerance of the target. */
	get onTarget(): boolean {
		const run = this.run;
		const m = this.#measured;
		if (!run || !m) return false;
		const driven = run.channels
			.map((c) => m.levelVrms[c === 'left' ? 0 : 1])
			.filter((v): v is number => v !== null);
		if (!driven.length) return false;
		const measured = driven.reduce((a, b) => a + b, 0) / driven.length;
		return Math.abs(measured / run.driveVrms - 1) <= LEVEL_TOLERANCE * 2;
	}

	// ── limits ───────────────────────────────────────────────────────────────

	#checkLimits(): void {
		const run = this.run;
		const limits = this.limits;
		if (!run || !limits || this.#phase !== 'running' || this.#ending || this.#breach) return;
		if (this.#watch?.runId !== run.id) {
			// Built once per run from what is held; afterwards each reading is judged as it arrives.
			const watch = new LiveBreachWatch(limits, { startedAtMs: run.startedAt, timeScale: run.timeScale });
			for (const r of this.#sorted) watch.add(r);
			this.#watch = { runId: run.id, watch };
		}
		const breaches = this.#watch.watch.check(this.#thdn);
		if (breaches.length) this.#onBreach(breaches[0]);
	}

	#onBreach(b: Breach): void {
		this.#breach = b;
		this.#alarmActive = true;
		this.#alarm.start();
		this.#alarmSounding = this.#alarm.playing;
		this.#driveOff();
		void this.#end({ kind: 'abort', reason: `Limit breached: ${b.message}`, at: Math.round(b.t), breach: b });
	}

	// ── ending ───────────────────────────────────────────────────────────────

	async #end(action: EndAction): Promise<void> {
		const run = this.run;
		if (!run || this.#ending) return;
		this.#ending = true;
		this.#endAction = action;
		writeStore(store.end(run.id), action);
		this.#phase = 'ending';
		// The distortion at the end goes into the record before the drive stops.
		const m = this.#measured;
		if (action.kind === 'finish' && m && this.#wantDrive && this.onTarget) {
			const i = run.channels[0] === 'right' ? 1 : 0;
			const thdn = m.thdnPercent[i];
			if (thdn !== null) this.#recordThdn(Date.now(), run.channels[0], thdn, m.powerW[i], m.levelVrms[i]);
		}
		this.#driveOff();
		// Nothing is dropped: the bridge hands over what it logged while this page was away, and
		// every reading and event is acknowledged before the run is closed.
		await this.#awaitBridgeHandover();
		await this.#flush();
		const url = `/api/soak-runs/${run.id}/${action.kind}`;
		const body =
			action.kind === 'abort' ? { reason: action.reason, at: action.at, breach: action.breach } : {};
		for (;;) {
			if (this.#disposed) return;
			const res = await postJson(url, body).catch(() => null);
			if (res?.ok) {
				this.#detail = (await res.json()) as SoakRunDetail;
				break;
			}
			if (res && (res.status === 409 || res.status === 404)) {
				// Ended elsewhere, or (finish) a second early by the server's clock: look, then retry or stop.
				const d = await this.#fetchDetail(run.id, false);
				if (d && d.run.status !== 'running') {
					this.#detail = d;
					break;
				}
			}
			this.#uploadError = res ? await messageOf(res) : 'The server did not answer; retrying';
			await new Promise((r) => setTimeout(r, 1000));
		}
		this.#uploadError = null;
		this.#phase = 'ended';
		this.#pending.clear();
		this.#events = [];
		this.#syncCounts();
		this.#clearStore(run.id);
		this.#bump();
	}

	/**
	 * Wait until the bridge has answered our backfill request (its history since our last reading).
	 * Bounded: a bridge that stays away cannot hold the run open forever; the server then sees the
	 * missing stretch as a gap (and an incomplete record does not pass).
	 */
	async #awaitBridgeHandover(timeoutMs = 30_000): Promise<void> {
		const started = Date.now();
		while (!this.#disposed && Date.now() - started < timeoutMs) {
			if (this.#link.status === 'connected' && this.#helloSeen && !this.#backfillOutstanding) return;
			await new Promise((r) => setTimeout(r, 250));
		}
	}

	async #flush(): Promise<void> {
		while (!this.#disposed && (this.#pending.size || this.#events.length)) {
			const progressed = await this.#uploadSome(true);
			if (!progressed) await new Promise((r) => setTimeout(r, Math.min(this.#backoffMs, 2000)));
		}
	}

	// ── uploads ──────────────────────────────────────────────────────────────

	#queueEvent(e: PendingEvent): void {
		this.#events.push(e);
		this.#persistDue = true;
		this.#syncCounts();
	}

	/** Send one batch of readings (and the queued events). Returns true when something was acknowledged. */
	async #uploadSome(force = false): Promise<boolean> {
		const run = this.run;
		if (!run || this.#uploading) return false;
		if (!this.#pending.size && !this.#events.length) return false;
		if (!force && Date.now() < this.#nextUploadAt) return false;
		this.#uploading = true;
		let progressed = false;
		try {
			if (this.#pending.size) {
				const batch = [...this.#pending.values()].sort((a, b) => a.seq - b.seq).slice(0, UPLOAD_BATCH);
				const res = await postJson(`/api/soak-runs/${run.id}/readings`, { readings: batch }).catch(
					() => null
				);
				if (res && (res.ok || res.status === 400 || res.status === 409)) {
					// 200: stored or already there. 400: the valid ones are stored, the rest never can be.
					// 409: the run has ended, nothing more can be stored. Either way this batch is settled.
					if (res.status === 400) {
						const j = (await res.json().catch(() => ({}))) as { rejected?: unknown[]; message?: string };
						if (!j.rejected) throw new Error(j.message ?? 'bad batch');
						this.#rejectedCount += j.rejected.length;
					}
					for (const r of batch) this.#pending.delete(key(r));
					progressed = true;
				} else {
					throw new Error(res ? await messageOf(res) : 'The server did not answer');
				}
			}
			if (this.#events.length) {
				const batch = this.#events.slice(0, 100);
				const res = await postJson(`/api/soak-runs/${run.id}/events`, { events: batch }).catch(() => null);
				if (res && (res.ok || res.status === 409 || res.status === 400)) {
					this.#events.splice(0, batch.length);
					progressed = true;
				} else {
					throw new Error(res ? await messageOf(res) : 'The server did not answer');
				}
			}
			this.#uploadError = null;
			this.#backoffMs = 1000;
			// Batches: wait a moment for more readings unless a backlog is waiting.
			this.#nextUploadAt = Date.now() + (this.#pending.size > UPLOAD_BATCH ? 0 : 1500);
		} catch (e) {
			this.#uploadError = `${e instanceof Error ? e.message : String(e)}; keeping ${this.#pending.size} reading(s) and retrying`;
			this.#nextUploadAt = Date.now() + this.#backoffMs;
			this.#backoffMs = Math.min(MAX_BACKOFF_MS, this.#backoffMs * 2);
		} finally {
			this.#uploading = false;
			this.#syncCounts();
			this.#persist();
		}
		return progressed;
	}

	#persist(): void {
		const run = this.run;
		if (!run || this.#phase === 'ended') return;
		this.#persistDue = false;
		writeStore(store.pending(run.id), this.#pending.size ? [...this.#pending.values()] : null);
		writeStore(store.events(run.id), this.#events.length ? this.#events : null);
	}

	#clearStore(runId: number): void {
		for (const k of Object.values(store)) writeStore(k(runId), null);
	}

	#syncCounts(): void {
		this.#pendingCount = this.#pending.size;
		this.#pendingEvents = this.#events.length;
	}

	#bump(): void {
		this.#version++;
	}

	// ── server reads ─────────────────────────────────────────────────────────

	async #fetchDetail(runId: number, fatal = true): Promise<SoakRunDetail | null> {
		const res = await fetch(`/api/soak-runs/${runId}`, {
			headers: { accept: 'application/json' },
			cache: 'no-store'
		}).catch(() => null);
		if (!res || !res.ok) {
			if (fatal) {
				this.#error = res ? await messageOf(res) : 'The server did not answer';
				this.#phase = 'error';
			}
			return null;
		}
		return (await res.json()) as SoakRunDetail;
	}

	async #loadServerReadings(runId: number): Promise<void> {
		let after = -1;
		const latest: Record<string, StoredReading> = {};
		for (;;) {
			const res = await fetch(`/api/soak-runs/${runId}/readings?after=${after}&limit=20000`, {
				cache: 'no-store'
			}).catch(() => null);
			if (!res || !res.ok) break;
			const page = (await res.json()) as { readings: StoredReading[]; lastSeq: number | null; more: boolean };
			for (const r of page.readings) {
				this.#store(r);
				const prev = latest[r.probe];
				if (!prev || r.seq > prev.seq) latest[r.probe] = r;
			}
			if (!page.more || page.lastSeq === null) break;
			after = page.lastSeq;
		}
		this.#latest = latest;
	}
}
