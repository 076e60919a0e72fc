// Temperature history for backfill: a ring buffer of readings in typed arrays (about 21 bytes
// a reading), sized for well over 24 hours of four probes at one reading per second each.
import { PROBE_IDS, type ProbeId, type TempReading } from '../../src/lib/bridge/protocol';

/** 24 h × 4 probes × 1 reading/s = 345 600; the margin covers faster serial loggers. */
export const TEMP_RING_CAPACITY = 500_000;

export class TempRing {
	private seq: Float64Array;
	private t: Float64Array;
	private celsius: Float32Array;
	private probe: Uint8Array;
	private head = 0; // next write position
	private count = 0;

	constructor(readonly capacity = TEMP_RING_CAPACITY) {
		// Grow on demand so a short session does not hold the full 10 MB.
		const initial = Math.min(capacity, 4096);
		this.seq = new Float64Array(initial);
		this.t = new Float64Array(initial);
		this.celsius = new Float32Array(initial);
		this.probe = new Uint8Array(initial);
	}

	get size(): number {
		return this.count;
	}

	private grow(): void {
		const len = Math.min(this.capacity, this.seq.length * 2);
		// Copy oldest-first into the start of the new arrays so slot k holds the k-th oldest
		// reading; the next write then goes right after them.
		const start = (this.head - this.count + this.seq.length) % this.seq.length;
		const copy = <T extends Float64Array | Float32Array | Uint8Array>(a: T, b: T): T => {
			const firstRun = Math.min(this.count, a.length - start);
			b.set(a.subarray(start, start + firstRun), 0);
			b.set(a.subarray(0, this.count - firstRun), firstRun);
			return b;
		};
		this.seq = copy(this.seq, new Float64Array(len));
		this.t = copy(this.t, new Float64Array(len));
		this.celsius = copy(this.celsius, new Float32Array(len));
		this.probe = copy(this.probe, new Uint8Array(len));
		this.head = this.count % len;
	}

	push(r: TempReading): void {
		if (this.count === this.seq.length && this.seq.length < this.capacity) this.grow();
		const i = this.head;
		this.seq[i] = r.seq;
		this.t[i] = r.t;
		this.celsius[i] = r.celsius;
		this.probe[i] = PROBE_IDS.indexOf(r.probe);
		this.head = (i + 1) % this.seq.length;
		if (this.count < this.seq.length) this.count++;
	}

	private at(k: number): TempReading {
		// k-th oldest stored reading
		const len = this.seq.length;
		const i = (this.head - this.count + k + len) % len;
		return {
			probe: PROBE_IDS[this.probe[i]] as ProbeId,
			seq: this.seq[i],
			t: this.t[i],
			celsius: Math.round(this.celsius[i] * 100) / 100
		};
	}

	oldestSeq(): number | null {
		return this.count ? this.at(0).seq : null;
	}
	lastSeq(): number | null {
		return this.count ? this.at(this.count - 1).seq : null;
	}

	/** Readings with seq > `afterSeq`, oldest first, at most `limit`. Sequence numbers increase, so search by bisection. */
	after(afterSeq: number, limit: number): TempReading[] {
		let lo = 0;
		let hi = this.count;
		while (lo < hi) {
			const mid = (lo + hi) >>> 1;
			const len = this.seq.length;
			const s = this.seq[(this.head - this.count + mid + len) % len];
			if (s <= afterSeq) lo = mid + 1;
			else hi = mid;
		}
		const out: TempReading[] = [];
		for (let k = lo; k < this.count && out.length < limit; k++) out.push(this.at(k));
		return out;
	}

	/** The newest reading of each probe. */
	latest(): TempReading[] {
		const seen = new Map<string, TempReading>();
		for (let k = this.count - 1; k >= 0 && seen.size < PROBE_IDS.length && k >= this.count - 10_000; k--) {
			const r = this.at(k);
			if (!seen.has(r.probe)) seen.set(r.probe, r);
		}
		return [...seen.values()].sort((a, b) => a.seq - b.seq);
	}
}

/** Assigns sequence numbers (monotone across restarts: they start at the boot wall-clock ms) and stores readings. */
export class TempLog {
	readonly ring: TempRing;
	private nextSeq: number;
	private listeners = new Set<(readings: TempReading[]) => void>();

	constructor(
		readonly bootMs = Date.now(),
		capacity = TEMP_RING_CAPACITY
	) {
		this.ring = new TempRing(capacity);
		this.nextSeq = bootMs;
	}

	/** Store a batch of readings taken at `tMs` and tell listeners. */
	record(values: { probe: ProbeId; celsius: number }[], tMs = Date.now()): TempReading[] {
		const readings = values.map((v) => ({ probe: v.probe, celsius: v.celsius, t: tMs, seq: this.nextSeq++ }));
		for (const r of readings) this.ring.push(r);
		for (const l of this.listeners) l(readings);
		return readings;
	}

	onReadings(listener: (readings: TempReading[]) => void): () => void {
		this.listeners.add(listener);
		return () => this.listeners.delete(listener);
	}
}
