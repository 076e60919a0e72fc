// Messages between the analysis pool and its worker threads.
import type { SnapshotAnalysisRequest } from './snapshot-analysis';
import type { StorePlan } from './snapshot-store';
import type { SweepTask } from './sweep-analysis';

/** Where and how a worker writes a snapshot: its own connection to the database file. */
export interface StoreTask {
	dbFile: string;
	/** Absolute path of the better-sqlite3 package, resolved by the server (a worker has no import base). */
	sqliteModule: string;
	plan: StorePlan;
	wav: Uint8Array;
}

export type PoolTask =
	| { id: number; kind: 'analyse'; request: SnapshotAnalysisRequest }
	| { id: number; kind: 'store'; store: StoreTask }
	| { id: number; kind: 'sweep'; sweep: SweepTask };

export type PoolReply =
	| { id: number; ok: true; output: unknown }
	/** A bad upload (`path` set: a 400 naming it) or a refused write (`code` set: 404/409/413). */
	| {
			id: number;
			ok: false;
			refusal: {
				path?: string;
				code?: 'not-found' | 'conflict' | 'too-large';
				message: string;
				issues?: { path: string; message: string }[];
			};
	  }
	/** A bug or crash inside the worker: answered as a 500 and logged. */
	| { id: number; ok: false; error: string };
