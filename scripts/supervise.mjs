// Keeps one child process running for `npm start`: when it stops without being asked to, it is
// started again after an exponential backoff (1 s, 2 s, 4 s … capped at 30 s), and the backoff
// starts over once a run has lasted a stable minute.
import { spawn } from 'node:child_process';

export const DEFAULT_BACKOFF = { initialMs: 1000, maxMs: 30_000, stableMs: 60_000 };

/**
 * Wait before restart number `failures` (1 = the first quick failure in a row).
 * @param {number} failures
 * @param {{ initialMs: number, maxMs: number }} backoff
 */
export function backoffDelayMs(failures, { initialMs, maxMs } = DEFAULT_BACKOFF) {
	return Math.min(maxMs, initialMs * 2 ** Math.max(0, failures - 1));
}

/** @param {number} ms */
function seconds(ms) {
	return ms < 1000 ? `${ms} ms` : `${+(ms / 1000).toFixed(1)} s`;
}

/**
 * @typedef {object} SuperviseOptions
 * @property {string} name                 how the log names the process
 * @property {string} command
 * @property {string[]} [args]
 * @property {import('node:child_process').SpawnOptions} [spawnOptions]
 * @property {Partial<typeof DEFAULT_BACKOFF>} [backoff]
 * @property {(line: string) => void} [log]  where restarts are announced
 * @property {(child: import('node:child_process').ChildProcess, run: number) => void} [onStart]
 * @property {(info: { code: number | null, signal: string | null, uptimeMs: number, failures: number, delayMs: number }) => void} [onRestartScheduled]
 */

/**
 * Starts `command` and restarts it whenever it exits unasked. `stop()` ends it for good.
 * @param {SuperviseOptions} options
 */
export function supervise(options) {
	const { name, command, args = [], spawnOptions = {}, log = (l) => console.error(l) } = options;
	const backoff = { ...DEFAULT_BACKOFF, ...options.backoff };
	/** @type {import('node:child_process').ChildProcess | null} */
	let child = null;
	/** @type {NodeJS.Timeout | null} */
	let timer = null;
	let failures = 0;
	let runs = 0;
	let stopping = false;
	/** @type {(() => void) | null} */
	let onStopped = null;

	function start() {
		timer = null;
		runs += 1;
		const startedAt = Date.now();
		const current = spawn(command, args, spawnOptions);
		child = current;
		let ended = false;
		const onEnded = (/** @type {number | null} */ code, /** @type {string | null} */ signal) => {
			if (ended) return;
			ended = true;
			if (child === current) child = null;
			if (stopping) {
				onStopped?.();
				return;
			}
			const uptimeMs = Date.now() - startedAt;
			if (uptimeMs >= backoff.stableMs) failures = 0;
			failures += 1;
			const delayMs = backoffDelayMs(failures, backoff);
			const how = signal ? `was killed by ${signal}` : `exited with code ${code}`;
			log(
				`[${name}] ${how} after ${seconds(uptimeMs)}; restarting in ${seconds(delayMs)}` +
					(failures > 1 ? ` (${failures} quick failures in a row)` : '')
			);
			options.onRestartScheduled?.({ code, signal, uptimeMs, failures, delayMs });
			timer = setTimeout(() => {
				log(`[${name}] restarting`);
				start();
			}, delayMs);
		};
		current.on('exit', onEnded);
		// A command that cannot be spawned at all reports 'error' and may never report 'exit'.
		current.on('error', (err) => {
			log(`[${name}] ${err.message}`);
			if (current.pid === undefined) onEnded(null, null);
		});
		options.onStart?.(current, runs);
	}

	start();

	return {
		get child() {
			return child;
		},
		get runs() {
			return runs;
		},
		/**
		 * Stops the process (SIGTERM, then SIGKILL after `killAfterMs`) and any pending restart.
		 * @param {{ signal?: NodeJS.Signals, killAfterMs?: number }} [opts]
		 * @returns {Promise<void>}
		 */
		stop({ signal = 'SIGTERM', killAfterMs = 5000 } = {}) {
			stopping = true;
			if (timer) clearTimeout(timer);
			timer = null;
			const running = child;
			if (!running || running.exitCode !== null || running.signalCode !== null) return Promise.resolve();
			return new Promise((resolve) => {
				const force = setTimeout(() => running.kill('SIGKILL'), killAfterMs);
				onStopped = () => {
					clearTimeout(force);
					resolve();
				};
				running.kill(signal);
			});
		}
	};
}
