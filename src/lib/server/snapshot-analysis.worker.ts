// The analysis worker's entry: one task at a time from the pool (analysis-pool.ts): analyse an
// upload with the same code as everywhere else (snapshot-analysis.ts → $lib/dsp), or write an
// analysed snapshot on the thread's own database connection (snapshot-store.ts). Bundled into one
// script by the `?node-worker` Vite plugin (vite.config.ts), so it may import `$lib` and packages.
import { createRequire } from 'node:module';
import { parentPort } from 'node:worker_threads';
import type { Database } from 'better-sqlite3';
import { AnalysisRefusal, analyseSnapshotAudio } from './snapshot-analysis';
import { StoreRefusal, writeSnapshot } from './snapshot-store';
import { analyseSweepWav } from './sweep-analysis';
import type { PoolReply, PoolTask, StoreTask } from './analysis-pool-messages';

const port = parentPort;
if (!port) throw new Error('snapshot-analysis.worker runs only as a worker thread');

/** One connection per database file, opened on first use and kept for the thread's life. */
const connections = new Map<string, Database>();
function connection(task: StoreTask): Database {
	let client = connections.get(task.dbFile);
	if (!client) {
		// better-sqlite3 is a native module: loaded from where the server found it, never bundled.
		const open = createRequire(task.sqliteModule)(task.sqliteModule) as new (file: string) => Database;
		client = new open(task.dbFile);
		// As the server's own connection (db/open.ts): these are per connection.
		client.pragma('synchronous = FULL');
		// Waiting for the write lock here holds up no request, so wait longer than the server's 5 s.
		client.pragma('busy_timeout = 60000');
		client.pragma('foreign_keys = ON');
		connections.set(task.dbFile, client);
	}
	return client;
}

port.on('message', (task: PoolTask) => {
	let reply: PoolReply;
	try {
		if (task.kind === 'store') {
			const id = writeSnapshot(connection(task.store), task.store.plan, task.store.wav);
			reply = { id: task.id, ok: true, output: { id } };
		} else if (task.kind === 'sweep') {
			reply = { id: task.id, ok: true, output: analyseSweepWav(task.sweep) };
		} else {
			const output = analyseSnapshotAudio(task.request);
			reply = { id: task.id, ok: true, output };
			// The WAV goes back without a copy: it is stored next.
			port.postMessage(reply, [output.wav.buffer as ArrayBuffer]);
			return;
		}
	} catch (e) {
		reply =
			e instanceof AnalysisRefusal
				? { id: task.id, ok: false, refusal: { path: e.path, message: e.message } }
				: e instanceof StoreRefusal
					? { id: task.id, ok: false, refusal: { code: e.code, message: e.message, issues: e.issues } }
					: { id: task.id, ok: false, error: e instanceof Error ? (e.stack ?? e.message) : String(e) };
	}
	port.postMessage(reply);
});
