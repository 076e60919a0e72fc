// Snapshot re-analysis runs on worker threads, never on the request thread: a pool with one
// thread per core (up to four) and a short bounded queue. A request reserves a place *before* its
// body is read; when every thread is busy and the queue is full it is refused at once with 503 +
// Retry-After, so a burst of large uploads neither stalls other users nor piles up 32 MiB bodies.
import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import { DomainError } from './errors';
import type { PoolReply, PoolTask, StoreTask } from './analysis-pool-messages';
import {
	AnalysisRefusal,
	type SnapshotAnalysisOutput,
	type SnapshotAnalysisRequest
} from './snapshot-analysis';
import { StoreRefusal } from './snapshot-store';
import type { SweepTask } from './sweep-analysis';
import type { SweepFileResult } from '../procedures/sweep-file';
// The worker entry bundled into one self-contained script (see the node-worker plugin in vite.config.ts).
import workerSource from './snapshot-analysis.worker.ts?node-worker';

/**
 * A running analysis holds up to ~150 MiB (the 32 MiB upload, its newest 6 s decoded, the decoder's
 * own copy); a queued one only its upload. Four threads keep a many-core server's peak under 1 GiB.
 */
export const MAX_DEFAULT_THREADS = 4;

export interface AnalysisPoolOptions {
	/** Worker threads; default one per core, at most MAX_DEFAULT_THREADS. */
	threads?: number;
	/** Reservations allowed to wait beyond the running ones; default twice the threads. */
	maxQueued?: number;
	/** Seconds a refused client is asked to wait (Retry-After). */
	retryAfterS?: number;
	/** The worker script (CommonJS text); default the bundled snapshot-analysis worker. */
	source?: string;
}

type TaskBody =
	| { kind: 'analyse'; request: SnapshotAnalysisRequest }
	| { kind: 'store'; store: StoreTask }
	| { kind: 'sweep'; sweep: SweepTask };

interface Pending {
	id: number;
	body: TaskBody;
	resolve: (out: unknown) => void;
	reject: (e: unknown) => void;
}

interface Slot {
	worker: Worker;
	job: Pending | null;
}

/**
 * A place in the pool, held from before the upload is read until it is stored: analyse with it,
 * then store on the same budget; release it when done (or unused). Releasing twice is harmless.
 */
export interface Reservation {
	run(request: SnapshotAnalysisRequest): Promise<SnapshotAnalysisOutput>;
	/** Write an analysed snapshot on a worker's own connection; resolves to the new snapshot's id. */
	store(task: StoreTask): Promise<number>;
	/** Analyse a recorded stepped sweep (a job's WAV) as a frequency response. */
	sweep(task: SweepTask): Promise<SweepFileResult>;
	release(): void;
}

export class AnalysisPool {
	readonly threads: number;
	readonly maxQueued: number;
	readonly retryAfterS: number;
	readonly #source: string;
	readonly #slots: Slot[] = [];
	readonly #waiting: Pending[] = [];
	#reserved = 0;
	#nextId = 1;
	#closed = false;

	constructor(options: AnalysisPoolOptions = {}) {
		this.threads = Math.max(1, options.threads ?? Math.min(availableParallelism(), MAX_DEFAULT_THREADS));
		this.maxQueued = Math.max(0, options.maxQueued ?? this.threads * 2);
		this.retryAfterS = options.retryAfterS ?? 5;
		this.#source = options.source ?? workerSource;
	}

	/** Reservations held now: analyses running, queued, and requests still reading their body. */
	get reserved(): number {
		return this.#reserved;
	}

	/** Analyses running on a thread now. */
	get running(): number {
		return this.#slots.filter((s) => s.job !== null).length;
	}

	/**
	 * A place for one analysis, or DomainError('busy') (503 with Retry-After) when the pool is full.
	 * Call before reading the upload.
	 */
	reserve(): Reservation {
		if (this.#closed) throw new Error('the analysis pool is closed');
		if (this.#reserved >= this.threads + this.maxQueued)
			throw new DomainError(
				'busy',
				`The server is analysing ${this.#reserved} snapshots, as many as it takes at once; ` +
					`send this one again in ${this.retryAfterS} s`,
				undefined,
				{ 'retry-after': String(this.retryAfterS) }
			);
		this.#reserved++;
		let held = true;
		const submit = <T>(body: TaskBody): Promise<T> => {
			if (!held) return Promise.reject(new Error('this reservation was already released'));
			return new Promise<T>((resolve, reject) => {
				const job: Pending = { id: this.#nextId++, body, resolve: resolve as (o: unknown) => void, reject };
				// A write finishes an upload already analysed: it goes ahead of new analyses.
				if (body.kind === 'store') this.#waiting.unshift(job);
				else this.#waiting.push(job);
				this.#pump();
			});
		};
		return {
			run: (request) => submit<SnapshotAnalysisOutput>({ kind: 'analyse', request }),
			store: async (store) => (await submit<{ id: number }>({ kind: 'store', store })).id,
			sweep: (sweep) => submit<SweepFileResult>({ kind: 'sweep', sweep }),
			release: () => {
				if (!held) return;
				held = false;
				this.#reserved--;
			}
		};
	}

	/** Stops every thread; analyses still running are rejected. */
	async close(): Promise<void> {
		this.#closed = true;
		for (const job of this.#waiting.splice(0)) job.reject(new Error('the analysis pool closed'));
		await Promise.all(
			this.#slots.splice(0).map((s) => {
				s.job?.reject(new Error('the analysis pool closed'));
				return s.worker.terminate();
			})
		);
	}

	#pump(): void {
		while (this.#waiting.length > 0) {
			let slot = this.#slots.find((s) => s.job === null);
			if (!slot && this.#slots.length < this.threads) slot = this.#spawn();
			if (!slot) return;
			const job = this.#waiting.shift()!;
			slot.job = job;
			slot.worker.ref();
			const task: PoolTask = { id: job.id, ...job.body };
			const b = job.body;
			const wav = b.kind === 'store' ? b.store.wav : b.kind === 'sweep' ? b.sweep.wav : b.request.wav;
			// The upload moves to the thread without a copy and comes back with the result; a buffer
			// that may not move (Node's shared Buffer pool) is copied instead.
			try {
				slot.worker.postMessage(task, [wav.buffer as ArrayBuffer]);
			} catch {
				slot.worker.postMessage(task);
			}
		}
	}

	#spawn(): Slot {
		const worker = new Worker(this.#source, {
			eval: true,
			// The script is CommonJS; `--input-type=module` (node -e …) would make eval'd code ESM.
			execArgv: process.execArgv.filter((a) => !a.startsWith('--input-type'))
		});
		// Idle threads must not keep the process (a test run, a CLI) alive.
		worker.unref();
		const slot: Slot = { worker, job: null };
		worker.on('message', (reply: PoolReply) => {
			const job = slot.job;
			if (!job || job.id !== reply.id) return;
			slot.job = null;
			worker.unref();
			if (reply.ok) job.resolve(reply.output);
			else if ('refusal' in reply) {
				const r = reply.refusal;
				job.reject(
					r.code
						? new StoreRefusal(r.code, r.message, r.issues)
						: new AnalysisRefusal(r.path ?? 'samples', r.message)
				);
			} else job.reject(new Error(`snapshot ${job.body.kind} failed in its worker: ${reply.error}`));
			this.#pump();
		});
		const lost = (why: string) => {
			const i = this.#slots.indexOf(slot);
			if (i < 0) return;
			this.#slots.splice(i, 1);
			slot.job?.reject(new Error(`the snapshot analysis worker stopped: ${why}`));
			slot.job = null;
			if (!this.#closed) this.#pump();
		};
		worker.on('error', (e) => lost(e instanceof Error ? e.message : String(e)));
		worker.on('exit', (code) => lost(`exit code ${code}`));
		this.#slots.push(slot);
		return slot;
	}
}

let shared: AnalysisPool | null = null;

/** The server's one pool, made on first use. */
export function analysisPool(): AnalysisPool {
	shared ??= new AnalysisPool();
	return shared;
}
