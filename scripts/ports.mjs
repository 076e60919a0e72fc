// Port checks for `npm start`: every port it will listen on is tried before anything is built,
// and each problem comes back as one line naming the variable that moves it.
import net from 'node:net';

/**
 * @typedef {{ label: string, variable: string, value: string, host: string }} PortWanted
 * @typedef {{ variable: string, line: string }} PortProblem
 */

/**
 * @param {number} port
 * @param {string} host
 * @returns {Promise<NodeJS.ErrnoException | null>} null when `port` can be listened on at `host`
 */
export function tryListen(port, host) {
	return new Promise((resolve) => {
		const server = net.createServer();
		server.once('error', (err) => resolve(/** @type {NodeJS.ErrnoException} */ (err)));
		server.listen({ port, host, exclusive: true }, () => server.close(() => resolve(null)));
	});
}

/**
 * The first port above `from` that is free at `host` and not in `avoid`.
 * @param {number} from
 * @param {string} host
 * @param {Set<number>} avoid
 */
async function suggest(from, host, avoid) {
	for (let p = from + 1; p <= Math.min(65535, from + 50); p++) {
		if (!avoid.has(p) && (await tryListen(p, host)) === null) return p;
	}
	return null;
}

/**
 * @param {PortWanted[]} wanted
 * @returns {Promise<PortProblem[]>} one problem per port that is malformed, repeated or taken
 */
export async function checkPorts(wanted) {
	/** @type {PortProblem[]} */
	const problems = [];
	const numbers = new Set(wanted.map((w) => Number(w.value)));
	/** @type {Map<number, PortWanted>} */
	const seen = new Map();
	for (const w of wanted) {
		const port = Number(w.value);
		if (!/^\d+$/.test(w.value) || port < 1 || port > 65535) {
			problems.push({
				variable: w.variable,
				line: `${w.variable}=${w.value} (${w.label}) is not a port number from 1 to 65535`
			});
			continue;
		}
		const first = seen.get(port);
		if (first) {
			const alt = await suggest(port, w.host, numbers);
			problems.push({
				variable: w.variable,
				line: `${w.label} and ${first.label} both want port ${port}; set ${w.variable} to another port${alt ? `, e.g. ${w.variable}=${alt}` : ''}`
			});
			continue;
		}
		seen.set(port, w);
		const err = await tryListen(port, w.host);
		if (!err) continue;
		const alt = await suggest(port, w.host, numbers);
		const why =
			err.code === 'EADDRINUSE'
				? 'is already in use'
				: err.code === 'EACCES'
					? 'needs privileges to listen on'
					: `cannot be listened on (${err.code ?? err.message})`;
		problems.push({
			variable: w.variable,
			line: `Port ${port} on ${w.host} (${w.label}) ${why}; set ${w.variable} to move it${alt ? `, e.g. ${w.variable}=${alt}` : ''}`
		});
	}
	return problems;
}

/**
 * Resolves once something answers HTTP at `url` (any status), or with false after `timeoutMs`.
 * @param {string} url
 * @param {{ timeoutMs?: number, intervalMs?: number, stillWanted?: () => boolean }} [opts]
 */
export async function waitForHttp(
	url,
	{ timeoutMs = 60_000, intervalMs = 200, stillWanted = () => true } = {}
) {
	const deadline = Date.now() + timeoutMs;
	while (Date.now() < deadline && stillWanted()) {
		try {
			const res = await fetch(url, { redirect: 'manual', signal: AbortSignal.timeout(2000) });
			await res.body?.cancel();
			return true;
		} catch {
			await new Promise((r) => setTimeout(r, intervalMs));
		}
	}
	return false;
}
