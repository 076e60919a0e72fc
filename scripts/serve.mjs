// Serves one adapter-node build (`node scripts/serve.mjs build/<hash>`) on HOST:PORT, in place of
// the adapter's own `node build`: a static file that disappears after start is a 404 (or, in the
// instant between check and open, a dropped response), never an unhandled error that kills the app.
import { AsyncLocalStorage } from 'node:async_hooks';
import fs from 'node:fs';
import http from 'node:http';
import { syncBuiltinESMExports } from 'node:module';
import { join, resolve, sep } from 'node:path';
import { pathToFileURL } from 'node:url';
import { registerUse, releaseUse } from './build.mjs';

const dir = process.argv[2] ? resolve(process.argv[2]) : '';
if (!dir || !fs.existsSync(join(dir, 'handler.js'))) {
	console.error(
		`usage: node scripts/serve.mjs BUILD_DIR  (a folder holding handler.js; got "${process.argv[2] ?? ''}")`
	);
	process.exit(2);
}

// adapter-node serves build/client (with static/ copied in) and build/prerendered through sirv,
// which lists the files once at start and then streams whatever its list says.
const staticRoots = ['client', 'prerendered'].map((d) => join(dir, d)).filter((d) => fs.existsSync(d));

/** Per static root: URL path → file, for every file present at start (sirv's list). */
const known = staticRoots.map((root) => {
	const files = new Map();
	for (const entry of fs.readdirSync(root, { recursive: true, withFileTypes: true })) {
		if (!entry.isFile()) continue;
		const file = join(entry.parentPath, entry.name);
		const urlPath =
			'/' +
			file
				.slice(root.length + 1)
				.split(sep)
				.join('/');
		// sirv leaves dotfiles out of its list (except under .well-known).
		if (/\/\./.test(urlPath) && !urlPath.startsWith('/.well-known/')) continue;
		files.set(urlPath, file);
	}
	return files;
});

/**
 * The names sirv tries for a request, in its order: precompressed variants the client accepts
 * (adapter-node writes .br and .gz beside each asset), the path itself, then .html and /index.
 * @param {string} pathname
 * @param {string} acceptEncoding
 */
function candidates(pathname, acceptEncoding) {
	const extensions = ['html', 'htm'];
	const suffixes = [''];
	if (acceptEncoding.includes('gzip')) suffixes.unshift(...extensions.map((x) => `${x}.gz`), 'gz');
	if (/(br|brotli)/i.test(acceptEncoding)) suffixes.unshift(...extensions.map((x) => `${x}.br`), 'br');
	suffixes.push(...extensions);
	let uri = pathname;
	if (uri.includes('%')) {
		try {
			uri = decodeURI(uri);
		} catch {
			// sirv keeps a malformed path as it is
		}
	}
	if (uri.endsWith('/')) uri = uri.slice(0, -1);
	const names = [];
	for (const suffix of suffixes) {
		const x = suffix ? `.${suffix}` : '';
		if (uri) names.push(uri + x);
		names.push(`${uri}/index${x}`);
	}
	return names;
}

/** The file sirv would send for this request when it was there at start and is gone now. */
function vanished(pathname, acceptEncoding) {
	const names = candidates(pathname, acceptEncoding);
	for (const files of known) {
		for (const name of names) {
			const file = files.get(name);
			if (file) return fs.existsSync(file) ? null : file;
		}
	}
	return null;
}

// Safety net for the instant between that check and sirv opening the file: sirv's read stream has
// no 'error' listener, so a failed open would be an uncaught exception. Streams opened for a
// request under the static roots get one that ends that response instead.
const currentResponse = new AsyncLocalStorage();
const createReadStream = fs.createReadStream;
fs.createReadStream = function guardedCreateReadStream(path, options) {
	const stream = createReadStream.call(this, path, options);
	const res = currentResponse.getStore();
	if (res && typeof path === 'string' && staticRoots.some((r) => path.startsWith(r + sep))) {
		stream.on('error', (err) => {
			if (stream.listenerCount('error') > 1) return;
			console.error(`static file ${path} could not be read (${err.code ?? err.message}); response dropped`);
			res.destroy();
		});
	}
	return stream;
};
syncBuiltinESMExports();

const { handler } = await import(pathToFileURL(join(dir, 'handler.js')).href);

const server = http.createServer((req, res) => {
	if (req.method === 'GET' || req.method === 'HEAD') {
		const pathname = (req.url ?? '/').split('?')[0];
		const file = vanished(pathname, String(req.headers['accept-encoding'] ?? ''));
		if (file) {
			console.error(`static file ${file} is gone since start; answered 404`);
			res.writeHead(404, { 'content-type': 'text/plain; charset=utf-8' }).end('Not found');
			return;
		}
	}
	currentResponse.run(res, () =>
		handler(req, res, () => {
			res.writeHead(404, { 'content-type': 'text/plain; charset=utf-8' }).end('Not found');
		})
	);
});

const host = process.env.HOST ?? '0.0.0.0';
const port = Number(process.env.PORT ?? 3000);
registerUse(dir);
server.on('error', (err) => {
	console.error(`cannot listen on ${host}:${port}: ${err.message}`);
	process.exit(1);
});
server.listen(port, host, () => {
	const address = server.address();
	const shown = typeof address === 'object' && address ? address.port : port;
	console.log(`Listening on http://${host.includes(':') ? `[${host}]` : host}:${shown}`);
});

let stopping = false;
function stop() {
	if (stopping) return;
	stopping = true;
	server.closeIdleConnections();
	server.close(() => {
		// @ts-expect-error a custom event, as adapter-node emits it
		process.emit('sveltekit:shutdown', 'SIGTERM');
		releaseUse(dir);
		process.exit(0);
	});
	// Open requests get a few seconds to finish.
	setTimeout(() => server.closeAllConnections(), 5000).unref();
}
process.on('SIGTERM', stop);
process.on('SIGINT', stop);
process.on('exit', () => releaseUse(dir));
