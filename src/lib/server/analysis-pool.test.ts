// The analysis pool's bookkeeping: places are reserved up to threads + queue and refused beyond
// with a 503 that carries Retry-After; a worker that dies fails its own analysis only.
import { describe, expect, it } from 'vitest';
import { AnalysisPool } from './analysis-pool';
import { DomainError } from './errors';
import type { SnapshotAnalysisRequest } from './snapshot-analysis';

const request = (): SnapshotAnalysisRequest => ({
	wav: new Uint8Array(16),
	fullScaleVolts: 1,
	bandHz: [20, 20_000],
	weighting: 'none',
	stimulus: 'tone',
	mainsHz: 50
});

describe('AnalysisPool', () => {
	it('refuses a reservation beyond threads + queue with busy (503) and Retry-After, and frees places', () => {
		const pool = new AnalysisPool({ threads: 1, maxQueued: 1, retryAfterS: 7 });
		const a = pool.reserve();
		const b = pool.reserve();
		let refusal: unknown;
		try {
			pool.reserve();
		} catch (e) {
			refusal = e;
		}
		expect(refusal).toBeInstanceOf(DomainError);
		expect((refusal as DomainError).status).toBe(503);
		expect((refusal as DomainError).headers).toEqual({ 'retry-after': '7' });
		a.release();
		a.release(); // twice is harmless
		expect(pool.reserved).toBe(1);
		pool.reserve();
		b.release();
	});

	it('a worker that dies fails its analysis; the next one gets a fresh thread', async () => {
		// A stand-in worker script: dies on a 16-byte upload, answers any other.
		const source = `
			const { parentPort } = require('node:worker_threads');
			parentPort.on('message', (t) => {
				if (t.request.wav.byteLength === 16) process.exit(3);
				parentPort.postMessage({ id: t.id, ok: true, output: { wav: t.request.wav } });
			});`;
		const pool = new AnalysisPool({ threads: 1, maxQueued: 0, source });
		const first = pool.reserve();
		await expect(first.run(request())).rejects.toThrow(/worker stopped: exit code 3/);
		first.release();
		expect(pool.reserved).toBe(0);
		const out = await pool.reserve().run({ ...request(), wav: new Uint8Array(8) });
		expect(out.wav.byteLength).toBe(8);
		await pool.close();
	});
});
