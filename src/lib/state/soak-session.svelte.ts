// The live state of one heat-soak run in the browser: takes temperatures from the shared
// BridgeLink, keeps every reading until the server has acknowledged it (memory + localStorage),
// resumes after a reload with backfill from the server and the bridge, drives the generator,
// watches the limits (alarm, generator off, abort) and finishes the run at its duration.
import type { BridgeLink, RestartEvent, TempsEvent } from './bridge-link.svelte';
import { SoakAlarmSound } from './soak-alarm';
import type { HelloMessage } from '$lib/bridge/protocol';
import { soakSeconds, type Breach, type Gap, type SoakReadingIn } from '$lib/soak/verdict';
import { LiveGapFinder } from '$lib/soak/gaps';
import { LiveSeriesBuilder, type SeriesBucketRow, type SoakSeries } from '$lib/soak/series';
import type { SoakRunDetail, SoakRunView } from '$lib/soak/types';
import type { CustomDrive, SoakPresetId } from '$lib/soak/presets';
import type { SoakLimits } from '$lib/soak/soak-limits';
import { LiveAnalysis, type LiveReadouts } from './live-analysis.svelte';
import * as api from './soak-session-api';
import { outboxKeys, readingKey as key, ReadingOutbox, type PendingEvent } from './soak-session-outbox';
import { estimateLevelVrms, isOnTarget, servoNextLevel } from './soak-session-drive';
import { SoakWatch, type ThdnRecord } from './soak-session-watch';
import type { StoredReadingLike } from './soak-session-types';

export type SoakPhase = 'idle' | 'loading' | 'starting' | 'running' | 'ending' | 'ended' | 'error';

export type StoredReading = StoredReadingLike;

type EndAction = { kind: 'finish' } | { kind: 'abort'; reason: string; at: number; breach?: Breach };

export interface Measured {
	levelVrms: (number | null)[];
	powerW: (number | null)[];
	thdnPercent: (number | null)[];
	dcVolts: (number | null)[];
	clipping: ({ clipped: boolean; reason: string | null } | null)[];
	atMs: number;
}

export interface StartParams {
	preset: SoakPresetId;
	custom?: CustomDrive;
	limits: Partial<SoakLimits>;
	/** The technician confirmed the one-third-power caution (old or unrestored units). */
	confirmHeat?: boolean;
}

/** Wall seconds past the planned end before the bridge's deadman stops the drive on its own. */
const DEADMAN_MARGIN_S = 30;
/**
 * Readings held in the page. Past HELD_MAX the oldest go (down to HELD_KEEP); a run with more
 * than RESUME_TAIL stored resumes from its newest RESUME_TAIL only — enough for the rise window
 * and the short-run chart, while the long-run chart, count and gaps come from the server's record.
 */
const HELD_MAX = 24_000;
const HELD_KEEP = 16_000;
const RESUME_TAIL = 8_000;

const browserStorage = () => (typeof localStorage === 'undefined' ? null : localStorage);

/**
 * One run on the soak page. Composes the reading outbox (persist, upload, backoff), the drive
 * servo, the watch over temperatures and output, the gap finder and the client API; this class
 * holds the page's state and the order things happen in.
 */
export class SoakSession {
	#phase = $state<SoakPhase>('idle');
	#detail = $state.raw<SoakRunDetail | null>(null);
	#error = $state<string | null>(null);
	#nowMs = $state(Date.now());
	#latest = $state.raw<Record<string, StoredReading>>({});
	#version = $state(0);
	#pendingCount = $state(0);
	#pendingEvents = $state(0);
	#outboxError = $state<string | null>(null);
	#endError = $state<string | null>(null);
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
	/** The same readings ordered by seq, kept as they arrive (inserted in place when late). */
	#sorted: StoredReading[] = [];
	#gapFinder = new LiveGapFinder();
	/**
	 * Readings stored on the server but not held here (older than the held ones): a resumed long
	 * run holds only its newest readings, and a live one lets its oldest go past HELD_MAX.
	 */
	#unheldCount = 0;
	/** Readings at or below this seq are not held (the server has them). */
	#floorSeq = -Infinity;
	/** Breaks in the record before the held readings, from the server's summary. */
	#unheldGaps: Gap[] = [];
	/** Bucket rows the server had when a long run was resumed, and the highest seq they include. */
	#seed: { rows: SeriesBucketRow[]; upToSeq: number } | null = null;
	/** The run's chart downsampled as readings arrive (built once the run is known). */
	#series: LiveSeriesBuilder | null = null;
	#outbox: ReadingOutbox<StoredReading> | null = null;
	#watch: SoakWatch | null = null;
	#endAction: EndAction | null = null;
	#unsubs: (() => void)[] = [];
	#tick: ReturnType<typeof setInterval> | null = null;
	#ending = false;
	#wantDrive = false;
	#lastDriveSentAt = 0;
	#lastOffSentAt = 0;
	#offConfirmed = false;
	#lastServoAt = 0;
	#initialLevelVrms: number | null = null;
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
		return this.#unheldCount + this.#all.size;
	}
	/** Readings not yet acknowledged by the server. */
	get pendingCount(): number {
		return this.#pendingCount;
	}
	get pendingEvents(): number {
		return this.#pendingEvents;
	}
	get uploadError(): string | null {
		return this.#endError ?? this.#outboxError;
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
	/** True when the measured output is within tolerance of the target. */
	get onTarget(): boolean {
		const run = this.run;
		const m = this.#measured;
		return !!run && !!m && isOnTarget(run, m.levelVrms);
	}

	/** Every reading, ordered by seq (a fresh array, so derived views see a change). */
	readings(): StoredReading[] {
		return this.#sorted.slice();
	}

	/** Breaks in the record (bridge restarts, long silences), kept as readings arrive. */
	gaps(): Gap[] {
		void this.#version;
		const live = this.#gapFinder.gaps();
		return this.#unheldGaps.length ? [...this.#unheldGaps, ...live] : live;
	}

	/** The record downsampled to a fixed number of buckets per probe (a long run's chart). */
	liveSeries(): SoakSeries | null {
		void this.#version;
		return this.#series?.series() ?? null;
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
		this.#gapFinder.add(r);
		this.#series?.add(r);
		this.#watch?.addReading(r);
		if (list.length > HELD_MAX) this.#letGo(list.length - HELD_KEEP);
		return true;
	}

	/** Stop holding the `n` oldest readings (the server has them; counts, chart and gaps keep them). */
	#letGo(n: number): void {
		const gone = this.#sorted.splice(0, n);
		for (const r of gone) this.#all.delete(key(r));
		this.#unheldCount += gone.length;
		const last = gone.at(-1);
		if (last) this.#floorSeq = Math.max(this.#floorSeq, last.seq);
	}

	// ── lifecycle ────────────────────────────────────────────────────────────

	#newOutbox(runId: number): ReadingOutbox<StoredReading> {
		const outbox = new ReadingOutbox<StoredReading>(runId, {
			storage: browserStorage(),
			transport: { postReadings: api.postReadings, postEvents: api.postEvents },
			onChange: () => this.#syncCounts()
		});
		this.#outbox = outbox;
		return outbox;
	}

	/** Open an existing run: a running one resumes (backfill, generator, limits), an ended one is shown. */
	async open(runId: number): Promise<void> {
		this.#phase = 'loading';
		const detail = await this.#fetchDetail(runId);
		if (!detail) return;
		this.#detail = detail;
		const outbox = this.#newOutbox(runId);
		if (detail.run.status !== 'running') {
			// An ended run is shown from the server's stored summary and chart: no reading is loaded,
			// so a day-long record opens at once.
			this.#phase = 'ended';
			outbox.close();
			this.#bump();
			return;
		}
		if (detail.readingCount > RESUME_TAIL && detail.seriesRows) await this.#loadTail(runId, detail);
		else await this.#loadServerReadings(runId);
		this.#watchFor(detail).seedThdn(
			detail.events
				.filter((e) => e.kind === 'thdn')
				.map((e) => ({ t: e.at, thdnPercent: (e.detail as { thdnPercent: number }).thdnPercent }))
		);
		// Readings and events the last page had not yet got acknowledged.
		for (const r of outbox.restore().readings) this.#store(r);
		this.#endAction = outbox.read<EndAction>(outboxKeys.end(runId));
		this.#initialLevelVrms = outbox.read<number>(outboxKeys.gen(runId));
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
		const created = await api.createRun(this.#jobId, {
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
		});
		if (!created.ok) {
			this.#error = created.message;
			this.#phase = 'idle';
			return;
		}
		const detail = await this.#fetchDetail(created.value.id);
		if (!detail) return;
		this.#detail = detail;
		this.#newOutbox(detail.run.id);
		this.#watchFor(detail);
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
		if (this.#phase !== 'ended') this.#outbox?.persist();
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
		const dcVolts: (number | null)[] = [null, null];
		const clipping: ({ clipped: boolean; reason: string | null } | null)[] = [null, null];
		r.results.forEach((res, i) => {
			const ch = r.channelIndex[i];
			if (ch > 1) return;
			levelVrms[ch] = res.levelVrms;
			powerW[ch] = res.powerW ?? null;
			thdnPercent[ch] = res.thdnPercent;
			dcVolts[ch] = res.dcVolts ?? null;
			clipping[ch] = res.clipping ?? null;
		});
		this.#measured = { levelVrms, powerW, thdnPercent, dcVolts, clipping, atMs: Date.now() };
		this.#servo();
		this.#watchOutput();
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
			if (r.seq <= this.#floorSeq || this.#all.has(key(r))) continue;
			const stored: StoredReading = {
				probe: r.probe,
				seq: r.seq,
				t: r.t,
				celsius: r.celsius,
				bootId: e.bootId
			};
			this.#store(stored);
			if (!this.#endedOnServer()) this.#outbox?.addReading(stored);
			added++;
			const prev = latest[r.probe];
			if (!prev || r.seq > prev.seq) latest[r.probe] = stored;
		}
		if (!added) return;
		this.#latest = latest;
		this.#outbox?.touched();
		this.#bump();
		this.#checkLimits();
	}

	#endedOnServer(): boolean {
		return this.#detail?.run.status !== 'running';
	}

	#onTick(): void {
		this.#nowMs = Date.now();
		if (this.#phase !== 'ended') this.#outbox?.persistIfDue();
		void this.#outbox?.uploadSome();
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

	#estimateLevel(): number {
		const run = this.run as SoakRunView;
		const sim = this.#link.simulator ?? this.#link.hello?.simulator ?? null;
		return estimateLevelVrms(run.driveVrms, sim ? sim.volumeDb : null);
	}

	#drive(): void {
		const run = this.run;
		if (!run || !this.#wantDrive) return;
		const level = this.#generatorLevelVrms ?? this.#estimateLevel();
		this.#initialLevelVrms ??= level;
		this.#generatorLevelVrms = level;
		this.#outbox?.write(outboxKeys.gen(run.id), level);
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
		const current = this.#generatorLevelVrms ?? this.#estimateLevel();
		const next = servoNextLevel(run, m.levelVrms, current, this.#initialLevelVrms ?? current);
		if (next === null) return;
		this.#lastServoAt = Date.now();
		this.#generatorLevelVrms = next;
		this.#drive();
	}

	/** THD+N into the record and against the ceiling; the output dropping out; DC offset drift. */
	#watchOutput(): void {
		const run = this.run;
		const m = this.#measured;
		const watch = this.#watch;
		if (!run || !m || !watch || this.#phase !== 'running' || this.#ending || this.#breach) return;
		const driving = this.#wantDrive && this.#link.generator?.kind === 'sine';
		const dropout = watch.dropout(m, driving);
		if (dropout) return this.#onBreach(dropout);
		for (const dc of watch.dcOffset(m, this.#link.dcCoupled))
			this.#queueEvent({ kind: 'dc-offset', at: m.atMs, key: `dc:${dc.channel}:${m.atMs}`, detail: dc });
		if (!this.#wantDrive) return;
		const sample = watch.thdnSample(m, this.onTarget, Date.now());
		if (!sample) return;
		this.#queueThdn(sample.record);
		if (sample.over) this.#checkLimits();
	}

	#queueThdn(r: ThdnRecord): void {
		this.#queueEvent({
			kind: 'thdn',
			at: r.t,
			key: `thdn:${r.t}`,
			detail: { thdnPercent: r.thdnPercent, outputW: r.outputW, outputVrms: r.outputVrms, channel: r.channel }
		});
	}

	// ── limits ───────────────────────────────────────────────────────────────

	/** The watch over this run, built once from what is held; afterwards each reading is judged as it arrives. */
	#watchFor(detail: SoakRunDetail): SoakWatch {
		if (this.#watch && this.#watch.run === detail.run) return this.#watch;
		const watch = new SoakWatch(detail.run, detail.limits);
		const series = new LiveSeriesBuilder({
			startedAtMs: detail.run.startedAt,
			durationS: detail.run.durationS,
			timeScale: detail.run.timeScale
		});
		const seed = this.#seed;
		if (seed) series.seed(seed.rows);
		for (const r of this.#sorted) {
			watch.addReading(r);
			// The seeded rows already hold what the server had when the page resumed.
			if (!seed || r.seq > seed.upToSeq) series.add(r);
		}
		this.#series = series;
		this.#watch = watch;
		return watch;
	}

	#checkLimits(): void {
		const run = this.run;
		if (!run || !this.#watch || this.#phase !== 'running' || this.#ending || this.#breach) return;
		const breaches = this.#watch.check();
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
		const outbox = this.#outbox;
		if (!run || !outbox || this.#ending) return;
		this.#ending = true;
		this.#endAction = action;
		outbox.write(outboxKeys.end(run.id), action);
		this.#phase = 'ending';
		// The distortion at the end goes into the record before the drive stops.
		const m = this.#measured;
		if (action.kind === 'finish' && m && this.#wantDrive && this.onTarget) {
			const i = run.channels[0] === 'right' ? 1 : 0;
			const thdn = m.thdnPercent[i];
			if (thdn !== null) {
				const record = {
					t: Date.now(),
					channel: run.channels[0],
					thdnPercent: thdn,
					outputW: m.powerW[i],
					outputVrms: m.levelVrms[i]
				};
				this.#watch?.noteThdn(record);
				this.#queueThdn(record);
			}
		}
		this.#driveOff();
		// Nothing is dropped: the bridge hands over what it logged while this page was away, and
		// every reading and event is acknowledged before the run is closed.
		await this.#awaitBridgeHandover();
		await outbox.flush(() => this.#disposed);
		const body =
			action.kind === 'abort' ? { reason: action.reason, at: action.at, breach: action.breach } : {};
		for (;;) {
			if (this.#disposed) return;
			const res = await api.postEnd(run.id, action.kind, body);
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
			this.#endError = res ? await api.messageOf(res) : 'The server did not answer; retrying';
			await new Promise((r) => setTimeout(r, 1000));
		}
		this.#endError = null;
		this.#phase = 'ended';
		outbox.close();
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

	#queueEvent(e: PendingEvent): void {
		this.#outbox?.addEvent(e);
	}

	#syncCounts(): void {
		const o = this.#outbox;
		this.#pendingCount = o?.pendingCount ?? 0;
		this.#pendingEvents = o?.pendingEvents ?? 0;
		this.#outboxError = o?.error ?? null;
		this.#rejectedCount = o?.rejectedCount ?? 0;
	}

	#bump(): void {
		this.#version++;
	}

	// ── server reads ─────────────────────────────────────────────────────────

	async #fetchDetail(runId: number, fatal = true): Promise<SoakRunDetail | null> {
		const got = await api.fetchDetail(runId);
		if (got.ok) return got.value;
		if (fatal) {
			this.#error = got.message;
			this.#phase = 'error';
		}
		return null;
	}

	/**
	 * Resume a long run from its newest readings only: the chart from the server's bucket rows,
	 * the count and earlier gaps from its summary. A day's run reloads as fast as an hour's.
	 */
	async #loadTail(runId: number, detail: SoakRunDetail): Promise<void> {
		const page = await api.fetchReadingsTail<StoredReading>(runId, RESUME_TAIL);
		if (!page || !page.readings.length) return this.#loadServerReadings(runId);
		const first = page.readings[0];
		const upToSeq = detail.lastSeq ?? -1;
		const latest: Record<string, StoredReading> = {};
		for (const r of page.readings) {
			this.#store(r);
			const prev = latest[r.probe];
			if (!prev || r.seq > prev.seq) latest[r.probe] = r;
		}
		this.#latest = latest;
		const heldOfCount = page.readings.filter((r) => r.seq <= upToSeq).length;
		this.#unheldCount = Math.max(0, detail.readingCount - heldOfCount);
		this.#floorSeq = first.seq - 1;
		this.#unheldGaps = detail.summary.gaps.filter((g) => g.toSeq <= first.seq);
		this.#seed = { rows: detail.seriesRows ?? [], upToSeq };
	}

	async #loadServerReadings(runId: number): Promise<void> {
		let after = -1;
		const latest: Record<string, StoredReading> = {};
		for (;;) {
			const page = await api.fetchReadings<StoredReading>(runId, after);
			if (!page) break;
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

export type { SoakReadingIn };
