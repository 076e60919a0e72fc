// The built app under scripts/serve.mjs: a static file removed while it runs is a 404 and the
// server stays up (adapter-node's own `node build` dies on that request with an unhandled ENOENT).
// Uses the real build of the current sources (built here once if missing), copied so that the
// copy, not a build some running `npm start` serves, loses its file.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawn, type ChildProcess } from 'node:child_process';
import { cpSync, mkdirSync, mkdtempSync, readdirSync, rmSync } from 'node:fs';
import http from 'node:http';
import net from 'node:net';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { ensureBuild, releaseUse } from './build.mjs';

const root = resolve(import.meta.dirname, '..');
let copy = '';
let dataDir = '';
let buildDir = '';
let server: ChildProcess | null = null;
let base = '';
let output = '';

async function freePort(): Promise<number> {
	const s = net.createServer();
	await new Promise<void>((r) => s.listen(0, '127.0.0.1', r));
	const port = (s.address() as net.AddressInfo).port;
	await new Promise((r) => s.close(r));
	return port;
}

const NODES = join('_app', 'immutable', 'nodes');

/** Immutable JavaScript assets of the copy (without their .br and .gz twins), as file names. */
function assets(): string[] {
	return readdirSync(join(copy, 'client', NODES)).filter((f) => f.endsWith('.js'));
}

/** GET over plain node:http, so the test decides the Accept-Encoding; rejects when the connection drops. */
function get(
	path: string,
	acceptEncoding = 'identity'
): Promise<{ status: number; encoding?: string; bytes: number }> {
	return new Promise((ok, fail) => {
		const req = http.get(`${base}${path}`, { headers: { 'accept-encoding': acceptEncoding } }, (res) => {
			let bytes = 0;
			res.on('data', (d: Buffer) => (bytes += d.length));
			res.on('end', () =>
				ok({ status: res.statusCode ?? 0, encoding: res.headers['content-encoding'], bytes })
			);
			res.on('error', fail);
		});
		req.on('error', fail);
	});
}

beforeAll(async () => {
	const build = await ensureBuild({ root, log: () => undefined });
	buildDir = build.dir;
	// Beside the real build, so the copy resolves node_modules the same way.
	copy = mkdtempSync(join(root, 'build', '.serve-test-'));
	cpSync(build.dir, copy, { recursive: true, filter: (src) => !src.includes('.in-use') });
	releaseUse(buildDir);
	dataDir = mkdtempSync(join(tmpdir(), 'benchlight-serve-test-'));

	const port = await freePort();
	base = `http://127.0.0.1:${port}`;
	server = spawn(process.execPath, ['scripts/serve.mjs', copy], {
		cwd: root,
		env: {
			...process.env,
			DATABASE_URL: join(dataDir, 'bench.db'),
			HOST: '127.0.0.1',
			PORT: String(port),
			ORIGIN: base,
			BRIDGE_SECRET: 'serve-test-only-bridge-secret-0123456789'
		},
		stdio: ['ignore', 'pipe', 'pipe']
	});
	await new Promise<void>((ok, fail) => {
		const onData = (d: Buffer) => {
			output += d.toString();
			if (output.includes('Listening on')) ok();
		};
		server!.stdout!.on('data', onData);
		server!.stderr!.on('data', (d: Buffer) => (output += d.toString()));
		server!.once('exit', (code) =>
			fail(new Error(`serve.mjs exited (${code}) before listening:\n${output}`))
		);
	});
}, 300_000);

afterAll(async () => {
	if (server && server.exitCode === null) {
		const exited = new Promise((r) => server!.once('exit', r));
		server.kill('SIGTERM');
		await exited;
	}
	if (copy) rmSync(copy, { recursive: true, force: true });
	if (dataDir) rmSync(dataDir, { recursive: true, force: true });
});

describe('serve.mjs', () => {
	it('answers 404 for a static file deleted after start, and keeps serving', async () => {
		const [asset] = assets();
		const url = `/_app/immutable/nodes/${asset}`;
		expect(await get(url)).toMatchObject({ status: 200 });
		// Precompressed twins exist and are what a browser gets.
		expect(await get(url, 'gzip, deflate, br')).toMatchObject({ status: 200, encoding: 'br' });

		// The asset and its twins disappear, as when a build folder is removed under a running app.
		for (const f of [asset, `${asset}.br`, `${asset}.gz`])
			rmSync(join(copy, 'client', NODES, f), { force: true });
		expect(await get(url)).toMatchObject({ status: 404 });
		expect(await get(url, 'gzip, deflate, br')).toMatchObject({ status: 404 });

		expect(await get('/safety')).toMatchObject({ status: 200 });
		expect(server!.exitCode).toBeNull();
		expect(output).toMatch(/is gone since start; answered 404/);
	});

	it('answers 404 when only the precompressed variant the browser would get is gone', async () => {
		const [asset] = assets();
		rmSync(join(copy, 'client', NODES, `${asset}.br`));
		expect(await get(`/_app/immutable/nodes/${asset}`, 'br')).toMatchObject({ status: 404 });
		// Other clients still get what is there.
		expect(await get(`/_app/immutable/nodes/${asset}`, 'gzip')).toMatchObject({
			status: 200,
			encoding: 'gzip'
		});
		expect(server!.exitCode).toBeNull();
	});

	it('survives a static file that cannot be opened when it is sent', async () => {
		// A folder where the file was: it exists, so the 404 check lets it through, but it cannot
		// be streamed, which is what a file deleted between that check and the open looks like.
		const [asset] = assets();
		const path = join(copy, 'client', NODES, asset);
		rmSync(path);
		mkdirSync(path);
		await expect(get(`/_app/immutable/nodes/${asset}`)).rejects.toThrow();

		expect(await get('/safety')).toMatchObject({ status: 200 });
		expect(server!.exitCode).toBeNull();
		expect(output).toMatch(/could not be read \(EISDIR\); response dropped/);
	});
});
