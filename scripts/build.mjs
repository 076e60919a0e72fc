// Builds the app once per set of sources into build/<hash>/ and never touches a build a running
// copy still uses: a second `npm start` (or the e2e server) reuses an up-to-date build, or builds
// beside it into a temporary folder that is renamed into place when complete.
//
//   node scripts/build.mjs [--owner PID]   prints the build folder on stdout (progress on stderr)
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import { join, relative, resolve, sep } from 'node:path';
import { pathToFileURL } from 'node:url';

/** What the bundle is made from; tests (*.test.ts, *.spec.ts) never reach it. */
export const BUILD_INPUTS = [
	'src',
	'static',
	'svelte.config.js',
	'vite.config.ts',
	'tsconfig.json',
	'package.json',
	'package-lock.json'
];
const HASH_DIR = /^[0-9a-f]{16}$/;
const TMP_DIR = /^\.tmp-[0-9a-f]{16}-(\d+)$/;
const IN_USE = '.in-use';
const LOCK_STALE_MS = 30_000;

/** Lines a successful build prints that say nothing to someone starting the app. */
const NOISE = [
	/^Run npm run preview to preview your production build locally\.$/,
	/^> Using @sveltejs\/adapter-node$/,
	/^✔ done$/,
	// adapter-node re-bundles Vite's server output chunk by chunk; chunks that only re-export are empty.
	/^Generated an empty chunk: "chunks\/[\w.-]+"\.$/
];
// eslint-disable-next-line no-control-regex
const ANSI = /\x1b\[[0-9;]*m/g;

/** @param {string} path */
function filesUnder(path) {
	/** @type {string[]} */
	const out = [];
	let stat;
	try {
		stat = fs.statSync(path);
	} catch {
		return out;
	}
	if (stat.isFile()) return [path];
	for (const entry of fs
		.readdirSync(path, { withFileTypes: true })
		.sort((a, b) => (a.name < b.name ? -1 : 1))) {
		const full = join(path, entry.name);
		if (entry.isDirectory()) out.push(...filesUnder(full));
		else if (entry.isFile() && !/\.(test|spec)\.[cm]?[jt]s$/.test(entry.name)) out.push(full);
	}
	return out;
}

/**
 * SHA-256 over the build inputs' paths and contents (and the Node version), first 16 hex digits.
 * @param {string} root the checkout
 */
export function inputsHash(root) {
	const hash = createHash('sha256');
	hash.update(`node ${process.versions.node}\n`);
	for (const input of BUILD_INPUTS) {
		for (const file of filesUnder(join(root, input))) {
			hash.update(relative(root, file).split(sep).join('/'));
			hash.update('\0');
			hash.update(fs.readFileSync(file));
			hash.update('\0');
		}
	}
	return hash.digest('hex').slice(0, 16);
}

/** @param {number} pid */
export function isAlive(pid) {
	try {
		process.kill(pid, 0);
		return true;
	} catch (e) {
		return /** @type {NodeJS.ErrnoException} */ (e).code === 'EPERM';
	}
}

/**
 * Marks `dir` as used by process `pid` until it exits (or `releaseUse`).
 * @param {string} dir
 */
export function registerUse(dir, pid = process.pid) {
	fs.mkdirSync(join(dir, IN_USE), { recursive: true });
	fs.writeFileSync(join(dir, IN_USE, String(pid)), '');
}

/** @param {string} dir */
export function releaseUse(dir, pid = process.pid) {
	fs.rmSync(join(dir, IN_USE, String(pid)), { force: true });
}

/**
 * Live processes using a build; forgets the ones that have exited.
 * @param {string} dir
 */
export function usersOf(dir) {
	/** @type {string[]} */
	let names = [];
	try {
		names = fs.readdirSync(join(dir, IN_USE));
	} catch {
		return [];
	}
	const live = [];
	for (const name of names) {
		const pid = Number(name);
		if (Number.isInteger(pid) && pid > 0 && isAlive(pid)) live.push(pid);
		else fs.rmSync(join(dir, IN_USE, name), { force: true });
	}
	return live;
}

/**
 * Removes builds no live process uses, and temporary folders of builds that died, except `keep`.
 * Anything else under build/ (a bare `vite build`'s build/manual, older layouts) is left alone.
 * @param {string} buildRoot
 * @param {string} [keep]
 * @returns {string[]} the removed folder names
 */
export function pruneBuilds(buildRoot, keep) {
	/** @type {string[]} */
	const removed = [];
	for (const name of fs.readdirSync(buildRoot)) {
		const full = join(buildRoot, name);
		if (keep && resolve(full) === resolve(keep)) continue;
		const tmp = TMP_DIR.exec(name);
		const unused = HASH_DIR.test(name) ? usersOf(full).length === 0 : tmp ? !isAlive(Number(tmp[1])) : false;
		if (unused) {
			fs.rmSync(full, { recursive: true, force: true });
			removed.push(name);
		}
	}
	return removed;
}

const sleep = (/** @type {number} */ ms) => new Promise((r) => setTimeout(r, ms));

/**
 * One build at a time per checkout: Vite's intermediate output (.svelte-kit/output) is shared.
 * @template T
 * @param {string} buildRoot
 * @param {(line: string) => void} log
 * @param {() => Promise<T>} fn
 * @returns {Promise<T>}
 */
async function withLock(buildRoot, log, fn) {
	const lock = join(buildRoot, '.lock');
	let told = false;
	for (;;) {
		try {
			fs.mkdirSync(lock);
			fs.writeFileSync(join(lock, 'pid'), String(process.pid));
			break;
		} catch (e) {
			if (/** @type {NodeJS.ErrnoException} */ (e).code !== 'EEXIST') throw e;
		}
		let holder = NaN;
		let ageMs = 0;
		try {
			holder = Number(fs.readFileSync(join(lock, 'pid'), 'utf8'));
		} catch {
			// Taken a moment ago and the pid not written yet, or its holder died in between.
		}
		try {
			ageMs = Date.now() - fs.statSync(lock).mtimeMs;
		} catch {
			continue;
		}
		const stale = Number.isInteger(holder) && holder > 0 ? !isAlive(holder) : ageMs > LOCK_STALE_MS;
		if (stale) {
			fs.rmSync(lock, { recursive: true, force: true });
			continue;
		}
		if (!told) log(`Waiting for another build (process ${holder || '?'}) in this checkout to finish`);
		told = true;
		await sleep(250);
	}
	try {
		return await fn();
	} finally {
		fs.rmSync(lock, { recursive: true, force: true });
	}
}

/**
 * Runs `vite build` into `out`, passing its warnings through without the known noise.
 * @param {string} root
 * @param {string} out
 * @param {(line: string) => void} log
 * @returns {Promise<void>}
 */
function viteBuild(root, out, log) {
	return new Promise((resolvePromise, reject) => {
		const child = spawn(
			process.execPath,
			[join(root, 'node_modules/vite/bin/vite.js'), 'build', '--logLevel', 'warn'],
			{
				cwd: root,
				env: { ...process.env, BENCHLIGHT_BUILD_OUT: out },
				stdio: ['ignore', 'pipe', 'pipe']
			}
		);
		/** @type {string[]} */
		const all = [];
		/** @type {string[]} */
		const shown = [];
		let partial = '';
		const onData = (/** @type {Buffer} */ chunk) => {
			const lines = (partial + chunk.toString()).split('\n');
			partial = lines.pop() ?? '';
			all.push(...lines);
		};
		child.stdout.on('data', onData);
		child.stderr.on('data', onData);
		child.on('error', reject);
		child.on('close', (code) => {
			if (partial) all.push(partial);
			if (code !== 0) {
				for (const line of all) log(line);
				reject(new Error(`vite build failed (exit ${code})`));
				return;
			}
			for (const line of all) {
				const plain = line.replace(ANSI, '').trim();
				if (NOISE.some((re) => re.test(plain))) continue;
				if (!plain && (shown.length === 0 || shown.at(-1) === '')) continue;
				shown.push(plain ? line : '');
			}
			while (shown.at(-1) === '') shown.pop();
			for (const line of shown) log(line);
			resolvePromise(undefined);
		});
	});
}

/**
 * The build for the current sources: reused when it exists, built otherwise. The folder is
 * registered as used by `owner` before the lock is released, so no concurrent prune removes it.
 * @param {{ root: string, owner?: number, log?: (line: string) => void }} options
 * @returns {Promise<{ dir: string, hash: string, built: boolean, pruned: string[] }>}
 */
export async function ensureBuild({ root, owner = process.pid, log = (l) => console.error(l) }) {
	const buildRoot = join(root, 'build');
	fs.mkdirSync(buildRoot, { recursive: true });
	const hash = inputsHash(root);
	const dir = join(buildRoot, hash);
	return withLock(buildRoot, log, async () => {
		let built = false;
		if (!fs.existsSync(join(dir, 'handler.js'))) {
			const tmp = join(buildRoot, `.tmp-${hash}-${process.pid}`);
			fs.rmSync(tmp, { recursive: true, force: true });
			try {
				await viteBuild(root, tmp, log);
				fs.rmSync(dir, { recursive: true, force: true });
				fs.renameSync(tmp, dir);
			} finally {
				fs.rmSync(tmp, { recursive: true, force: true });
			}
			built = true;
		}
		registerUse(dir, owner);
		const pruned = pruneBuilds(buildRoot, dir);
		return { dir, hash, built, pruned };
	});
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	const root = resolve(import.meta.dirname, '..');
	const ownerAt = process.argv.indexOf('--owner');
	const owner = ownerAt > 0 ? Number(process.argv[ownerAt + 1]) : process.pid;
	if (!Number.isInteger(owner) || owner <= 0) {
		console.error(
			'usage: node scripts/build.mjs [--owner PID]  (PID: the process that will serve the build)'
		);
		process.exit(2);
	}
	const t0 = performance.now();
	ensureBuild({ root, owner })
		.then(({ dir, hash, built }) => {
			const took = ((performance.now() - t0) / 1000).toFixed(1);
			console.error(built ? `Built ${hash} in ${took} s` : `Build ${hash} is up to date (sources unchanged)`);
			console.log(relative(root, dir));
		})
		.catch((e) => {
			console.error(e instanceof Error ? e.message : e);
			process.exit(1);
		});
}
