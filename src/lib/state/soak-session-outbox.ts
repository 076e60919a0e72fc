// The soak page's outbox: every reading and event waits here until the server has acknowledged
// it, survives a reload (kept in localStorage), and goes up in batches with exponential backoff
// while the server is away. Plain TypeScript with its storage, transport and clock passed in, so
// it is unit-tested without a browser.
import type { StoredReadingLike } from './soak-session-types';

export interface OutboxStorage {
	getItem(key: string): string | null;
	setItem(key: string, value: string): void;
	removeItem(key: string): void;
}

export interface OutboxTransport {
	postReadings(runId: number, readings: unknown[]): Promise<Response | null>;
	postEvents(runId: number, events: unknown[]): Promise<Response | null>;
}

export interface PendingEvent {
	kind: 'gap' | 'thdn' | 'generator' | 'note' | 'dc-offset';
	at: number;
	key: string;
	detail: Record<string, unknown>;
}

export interface OutboxOptions {
	storage: OutboxStorage | null;
	transport: OutboxTransport;
	now?: () => number;
	sleep?: (ms: number) => Promise<void>;
	/** Called after anything that changes the counts (the session mirrors them into its state). */
	onChange?: () => void;
	batchSize?: number;
	maxBackoffMs?: number;
}

export const UPLOAD_BATCH = 500;
export const EVENT_BATCH = 100;
export const MAX_BACKOFF_MS = 15_000;
const FIRST_BACKOFF_MS = 1000;
/** Without a backlog, wait this long for more readings before the next batch. */
const BATCH_PAUSE_MS = 1500;

/** localStorage keys of one run's unacknowledged work. */
export const outboxKeys = {
	pending: (id: number) => `benchlight-soak-pending:${id}`,
	events: (id: number) => `benchlight-soak-events:${id}`,
	end: (id: number) => `benchlight-soak-end:${id}`,
	gen: (id: number) => `benchlight-soak-gen:${id}`
};

export const readingKey = (r: { probe: string; seq: number }) => `${r.probe}:${r.seq}`;

export class ReadingOutbox<R extends StoredReadingLike = StoredReadingLike> {
	readonly #runId: number;
	readonly #o: Required<Omit<OutboxOptions, 'storage' | 'onChange'>> &
		Pick<OutboxOptions, 'storage' | 'onChange'>;
	#pending = new Map<string, R>();
	#events: PendingEvent[] = [];
	#uploading = false;
	#backoffMs = FIRST_BACKOFF_MS;
	#nextUploadAt = 0;
	#persistDue = false;
	#closed = false;
	#error: string | null = null;
	#rejected = 0;

	constructor(runId: number, options: OutboxOptions) {
		this.#runId = runId;
		this.#o = {
			now: Date.now,
			sleep: (ms) => new Promise((r) => setTimeout(r, ms)),
			batchSize: UPLOAD_BATCH,
			maxBackoffMs: MAX_BACKOFF_MS,
			...options
		};
	}

	get runId(): number {
		return this.#runId;
	}
	get pendingCount(): number {
		return this.#pending.size;
	}
	get pendingEvents(): number {
		return this.#events.length;
	}
	/** Why the last upload failed (and that nothing is lost), or null. */
	get error(): string | null {
		return this.#error;
	}
	/** Readings the server refused for good (named in its 400). */
	get rejectedCount(): number {
		return this.#rejected;
	}
	get empty(): boolean {
		return !this.#pending.size && !this.#events.length;
	}

	// ── storage ──────────────────────────────────────────────────────────────

	read<T>(key: string): T | null {
		try {
			const v = this.#o.storage?.getItem(key);
			return v ? (JSON.parse(v) as T) : null;
		} catch {
			return null;
		}
	}
	write(key: string, v: unknown): boolean {
		const s = this.#o.storage;
		if (!s) return false;
		try {
			if (v === null) s.removeItem(key);
			else s.setItem(key, JSON.stringify(v));
			return true;
		} catch {
			// Quota or privacy mode: the readings stay in memory and keep being retried.
			return false;
		}
	}

	/** What the last page left unacknowledged: its readings and events go back in the queue. */
	restore(): { readings: R[]; events: PendingEvent[] } {
		const readings = this.read<R[]>(outboxKeys.pending(this.#runId)) ?? [];
		const events = this.read<PendingEvent[]>(outboxKeys.events(this.#runId)) ?? [];
		for (const r of readings) this.#pending.set(readingKey(r), r);
		this.#events.push(...events);
		this.#changed();
		return { readings, events };
	}

	persist(): void {
		if (this.#closed) return;
		this.#persistDue = false;
		this.write(outboxKeys.pending(this.#runId), this.#pending.size ? [...this.#pending.values()] : null);
		this.write(outboxKeys.events(this.#runId), this.#events.length ? this.#events : null);
	}
	persistIfDue(): void {
		if (this.#persistDue) this.persist();
	}

	/** The run has ended on the server: forget everything kept for it. */
	close(): void {
		this.#pending.clear();
		this.#events = [];
		for (const k of Object.values(outboxKeys)) this.write(k(this.#runId), null);
		this.#closed = true;
		this.#changed();
	}

	// ── queue ────────────────────────────────────────────────────────────────

	addReading(r: R): void {
		if (this.#closed) return;
		this.#pending.set(readingKey(r), r);
		this.#persistDue = true;
	}
	addEvent(e: PendingEvent): void {
		if (this.#closed) return;
		this.#events.push(e);
		this.#persistDue = true;
		this.#changed();
	}
	/** Counts changed by a run of `addReading` calls. */
	touched(): void {
		this.#changed();
	}

	// ── upload ───────────────────────────────────────────────────────────────

	/** Send one batch of readings and one of events. True when something was acknowledged. */
	async uploadSome(force = false): Promise<boolean> {
		if (this.#uploading || this.empty) return false;
		if (!force && this.#o.now() < this.#nextUploadAt) return false;
		this.#uploading = true;
		let progressed = false;
		try {
			if (this.#pending.size) {
				const batch = [...this.#pending.values()].sort((a, b) => a.seq - b.seq).slice(0, this.#o.batchSize);
				const res = await this.#o.transport.postReadings(this.#runId, batch);
				if (res && (res.ok || res.status === 400 || res.status === 409)) {
					// 200: stored or already there. 400: the valid ones are stored, the rest never can be.
					// 409: the run has ended, nothing more can be stored. Either way this batch is settled.
					if (res.status === 400) {
						const j = (await res.json().catch(() => ({}))) as { rejected?: unknown[]; message?: string };
						if (!j.rejected) throw new Error(j.message ?? 'bad batch');
						this.#rejected += j.rejected.length;
					}
					for (const r of batch) this.#pending.delete(readingKey(r));
					progressed = true;
				} else throw new Error(res ? await messageOf(res) : 'The server did not answer');
			}
			if (this.#events.length) {
				const batch = this.#events.slice(0, EVENT_BATCH);
				const res = await this.#o.transport.postEvents(this.#runId, batch);
				if (res && (res.ok || res.status === 409 || res.status === 400)) {
					this.#events.splice(0, batch.length);
					progressed = true;
				} else throw new Error(res ? await messageOf(res) : 'The server did not answer');
			}
			this.#error = null;
			this.#backoffMs = FIRST_BACKOFF_MS;
			// Batches: wait a moment for more readings unless a backlog is waiting.
			this.#nextUploadAt = this.#o.now() + (this.#pending.size > this.#o.batchSize ? 0 : BATCH_PAUSE_MS);
		} catch (e) {
			this.#error = `${e instanceof Error ? e.message : String(e)}; keeping ${this.#pending.size} reading(s) and retrying`;
			this.#nextUploadAt = this.#o.now() + this.#backoffMs;
			this.#backoffMs = Math.min(this.#o.maxBackoffMs, this.#backoffMs * 2);
		} finally {
			this.#uploading = false;
			this.persist();
			this.#changed();
		}
		return progressed;
	}

	/** Upload until everything is acknowledged (or `stop()` says to give up, e.g. the page is gone). */
	async flush(stop: () => boolean = () => false): Promise<void> {
		while (!stop() && !this.empty) {
			const progressed = await this.uploadSome(true);
			if (!progressed) await this.#o.sleep(Math.min(this.#backoffMs, 2000));
		}
	}

	/** The wait before the next retry (for tests and the page's status line). */
	get backoffMs(): number {
		return this.#backoffMs;
	}

	#changed(): void {
		this.#o.onChange?.();
	}
}

async function messageOf(res: Response): Promise<string> {
	try {
		const j = (await res.json()) as { message?: string };
		return j.message ?? `HTTP ${res.status}`;
	} catch {
		return `HTTP ${res.status}`;
	}
}
