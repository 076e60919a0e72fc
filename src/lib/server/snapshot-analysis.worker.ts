// The analysis worker's entry: one snapshot at a time from the pool (analysis-pool.ts), analysed by
// the same code as everywhere else (snapshot-analysis.ts → $lib/dsp). Bundled into one script by the
// `?node-worker` Vite plugin (vite.config.ts), so it may import `$lib` and packages freely.
import { parentPort } from 'node:worker_threads';
import { AnalysisRefusal, analyseSnapshotAudio, type SnapshotAnalysisRequest } from './snapshot-analysis';
import type { PoolReply, PoolTask } from './analysis-pool-messages';

const port = parentPort;
if (!port) throw new Error('snapshot-analysis.worker runs only as a worker thread');

port.on('message', (task: PoolTask<SnapshotAnalysisRequest>) => {
	let reply: PoolReply;
	try {
		const output = analyseSnapshotAudio(task.request);
		reply = { id: task.id, ok: true, output };
		// The WAV goes back without a copy: the caller stores it.
		port.postMessage(reply, [output.wav.buffer as ArrayBuffer]);
		return;
	} catch (e) {
		reply =
			e instanceof AnalysisRefusal
				? { id: task.id, ok: false, refusal: { path: e.path, message: e.message } }
				: { id: task.id, ok: false, error: e instanceof Error ? (e.stack ?? e.message) : String(e) };
	}
	port.postMessage(reply);
});
