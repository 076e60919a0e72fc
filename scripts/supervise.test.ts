// The restart logic behind `npm start`, on real child processes that exit.
import { describe, expect, it } from 'vitest';
import { backoffDelayMs, supervise } from './supervise.mjs';

const node = process.execPath;
const quiet = () => undefined;

/** Resolves after the `count`-th restart has been scheduled, with every schedule so far. */
function collectRestarts(count: number) {
	const seen: { code: number | null; failures: number; delayMs: number; uptimeMs: number }[] = [];
	let done: () => void = () => undefined;
	const finished = new Promise<void>((r) => (done = r));
	return {
		seen,
		finished,
		onRestartScheduled(info: (typeof seen)[number]) {
			seen.push(info);
			if (seen.length === count) done();
		}
	};
}

describe('backoffDelayMs', () => {
	it('doubles from 1 s and stops at 30 s', () => {
		expect([1, 2, 3, 4, 5, 6, 7, 20].map((n) => backoffDelayMs(n))).toEqual([
			1000, 2000, 4000, 8000, 16_000, 30_000, 30_000, 30_000
		]);
	});
});

describe('supervise', () => {
	it('restarts a child that keeps exiting, waiting twice as long each time up to the cap', async () => {
		const restarts = collectRestarts(5);
		const lines: string[] = [];
		const handle = supervise({
			name: 'flaky',
			command: node,
			args: ['-e', 'process.exit(3)'],
			backoff: { initialMs: 10, maxMs: 40, stableMs: 60_000 },
			log: (l) => lines.push(l),
			onRestartScheduled: restarts.onRestartScheduled
		});
		await restarts.finished;
		await handle.stop();
		expect(restarts.seen.map((r) => r.delayMs)).toEqual([10, 20, 40, 40, 40]);
		expect(restarts.seen.map((r) => r.failures)).toEqual([1, 2, 3, 4, 5]);
		expect(restarts.seen.every((r) => r.code === 3)).toBe(true);
		expect(handle.runs).toBe(5);
		// The log says what happened and what comes next.
		expect(lines[0]).toMatch(/^\[flaky\] exited with code 3 after .+; restarting in 10 ms$/);
		expect(lines).toContain('[flaky] restarting');
	});

	it('starts the backoff over after a run that lasted the stable time', async () => {
		const restarts = collectRestarts(3);
		// Each run lives at least 300 ms, longer than the 150 ms counted as stable.
		const handle = supervise({
			name: 'steady',
			command: node,
			args: ['-e', 'setTimeout(() => process.exit(1), 300)'],
			backoff: { initialMs: 10, maxMs: 1000, stableMs: 150 },
			log: quiet,
			onRestartScheduled: restarts.onRestartScheduled
		});
		await restarts.finished;
		await handle.stop();
		expect(restarts.seen.every((r) => r.uptimeMs >= 150)).toBe(true);
		expect(restarts.seen.map((r) => r.delayMs)).toEqual([10, 10, 10]);
	});

	it('stop() ends a running child and restarts nothing afterwards', async () => {
		let spawned = 0;
		const restarts = collectRestarts(1);
		const handle = supervise({
			name: 'server',
			command: node,
			args: ['-e', 'setInterval(() => {}, 1000)'],
			log: quiet,
			onStart: () => (spawned += 1),
			onRestartScheduled: restarts.onRestartScheduled
		});
		const child = handle.child!;
		await new Promise((r) => child.once('spawn', r));
		await handle.stop();
		expect(child.signalCode).toBe('SIGTERM');
		await new Promise((r) => setTimeout(r, 100));
		expect(spawned).toBe(1);
		expect(restarts.seen).toEqual([]);
	});

	it('stop() during the wait before a restart cancels the restart', async () => {
		const restarts = collectRestarts(1);
		let spawned = 0;
		const handle = supervise({
			name: 'flaky',
			command: node,
			args: ['-e', 'process.exit(2)'],
			backoff: { initialMs: 200, maxMs: 200, stableMs: 60_000 },
			log: quiet,
			onStart: () => (spawned += 1),
			onRestartScheduled: restarts.onRestartScheduled
		});
		await restarts.finished;
		await handle.stop();
		await new Promise((r) => setTimeout(r, 400));
		expect(spawned).toBe(1);
	});

	it('a child that ignores SIGTERM is killed after the grace period', async () => {
		const handle = supervise({
			name: 'stubborn',
			command: node,
			args: ['-e', "process.on('SIGTERM', () => {}); console.log('up'); setInterval(() => {}, 1000)"],
			spawnOptions: { stdio: ['ignore', 'pipe', 'inherit'] },
			log: quiet
		});
		const child = handle.child!;
		await new Promise((r) => child.stdout!.once('data', r));
		await handle.stop({ killAfterMs: 200 });
		expect(child.signalCode).toBe('SIGKILL');
	});
});
