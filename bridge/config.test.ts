// The bridge's start command: flags, environment, and the process refusing to start
// without a secret (and starting, serving and stopping cleanly with one).
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { allowedOriginsFrom, buildOptions, ConfigError, loadDotEnv } from './config';

const SECRET = 'x'.repeat(40);
const root = resolve(__dirname, '..');
const dir = mkdtempSync(join(tmpdir(), 'bridge-cfg-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('bridge flags and environment', () => {
	it('defaults to the simulator on loopback port 8787 at 48 kHz stereo', () => {
		const o = buildOptions([], { BRIDGE_SECRET: SECRET });
		expect(o).toMatchObject({
			host: '127.0.0.1',
			port: 8787,
			sampleRateHz: 48_000,
			channels: 2,
			blockSize: 4096,
			source: { kind: 'sim' },
			temps: { kind: 'sim' },
			timeScale: 1,
			seed: 1,
			allowedOrigins: ['http://localhost:3000', 'http://127.0.0.1:3000']
		});
	});

	it('reads every flag', () => {
		const o = buildOptions(
			[
				'--source',
				'cmd:arecord -D hw:1 -f S32_LE -r 96000 -c 2 -t raw',
				'--format',
				's32le',
				'--rate',
				'96000',
				'--channels',
				'2',
				'--block',
				'8192',
				'--host',
				'127.0.0.1',
				'--port',
				'8801',
				'--temps',
				'serial:/dev/ttyUSB0@115200',
				'--time-scale',
				'60',
				'--seed',
				'9',
				'--dc-coupled',
				'--clients-per-user',
				'2'
			],
			{ BRIDGE_SECRET: SECRET }
		);
		expect(o.source).toEqual({
			kind: 'cmd',
			command: 'arecord -D hw:1 -f S32_LE -r 96000 -c 2 -t raw',
			format: 's32le',
			dcCoupled: true
		});
		expect(o.tuning).toEqual({ maxClientsPerUser: 2 });
		expect(o.temps).toEqual({ kind: 'serial', path: '/dev/ttyUSB0', baudRate: 115200 });
		expect(o).toMatchObject({ sampleRateHz: 96_000, blockSize: 8192, port: 8801, timeScale: 60, seed: 9 });
		expect(
			buildOptions(['--source', 'wav:/tmp/a b.wav', '--temps', 'none'], { BRIDGE_SECRET: SECRET }).source
		).toEqual({ kind: 'wav', path: '/tmp/a b.wav' });
		// A capture command is AC-coupled unless told otherwise; three streams per user by default.
		const cmd = buildOptions(['--source', 'cmd:arecord -t raw'], { BRIDGE_SECRET: SECRET });
		expect(cmd.source).toMatchObject({ dcCoupled: false });
		expect(cmd.tuning).toEqual({ maxClientsPerUser: 3 });
	});

	it('refuses bad flags and a missing or short secret with a clear message', () => {
		expect(() => buildOptions([], {})).toThrow(/BRIDGE_SECRET is not set/);
		expect(() => buildOptions([], { BRIDGE_SECRET: 'short' })).toThrow(/shorter than 32/);
		expect(() => buildOptions(['--source', 'mic'], { BRIDGE_SECRET: SECRET })).toThrow(ConfigError);
		expect(() => buildOptions(['--rate', 'fast'], { BRIDGE_SECRET: SECRET })).toThrow(/--rate/);
		expect(() => buildOptions(['--format', 'u8'], { BRIDGE_SECRET: SECRET })).toThrow(/--format/);
		expect(() => buildOptions(['--bogus'], { BRIDGE_SECRET: SECRET })).toThrow(ConfigError);
		expect(() => buildOptions(['--dc-coupled'], { BRIDGE_SECRET: SECRET })).toThrow(/cmd: sources/);
		expect(() => buildOptions(['--clients-per-user', '0'], { BRIDGE_SECRET: SECRET })).toThrow(
			/--clients-per-user/
		);
	});

	it('derives allowed origins from BRIDGE_ALLOWED_ORIGINS, else ORIGIN', () => {
		expect(
			allowedOriginsFrom({ BRIDGE_ALLOWED_ORIGINS: 'http://127.0.0.1:4173, https://bench.example/' })
		).toEqual(['http://127.0.0.1:4173', 'https://bench.example']);
		expect(allowedOriginsFrom({ ORIGIN: 'http://127.0.0.1:4173' })).toEqual(['http://127.0.0.1:4173']);
		expect(() => allowedOriginsFrom({ BRIDGE_ALLOWED_ORIGINS: 'file:///x' })).toThrow(ConfigError);
	});

	it('takes values from .env without overriding the environment', () => {
		const path = join(dir, '.env');
		writeFileSync(path, 'BRIDGE_SECRET=from-file-0123456789-0123456789-xyz\nORIGIN=http://127.0.0.1:4173\n');
		const env: Record<string, string | undefined> = { ORIGIN: 'http://127.0.0.1:3000' };
		loadDotEnv(env, path);
		expect(env).toEqual({
			ORIGIN: 'http://127.0.0.1:3000',
			BRIDGE_SECRET: 'from-file-0123456789-0123456789-xyz'
		});
	});
});

describe('npm run bridge', () => {
	// An empty working directory, so no .env supplies a secret.
	const cwd = join(dir, 'run');
	mkdirSync(cwd);
	const children: ChildProcess[] = [];
	// Never leave a bridge running if a test fails half-way.
	afterAll(() => {
		for (const c of children) if (c.exitCode === null && c.signalCode === null) c.kill('SIGTERM');
	});
	const run = (args: string[], env: Record<string, string>) => {
		const child = spawn(join(root, 'node_modules/.bin/tsx'), [join(root, 'bridge/main.ts'), ...args], {
			cwd,
			env: { PATH: process.env.PATH ?? '', ...env },
			stdio: ['ignore', 'pipe', 'pipe']
		});
		children.push(child);
		return child;
	};

	it('refuses to start without BRIDGE_SECRET', async () => {
		const child = run([], {});
		let stderr = '';
		child.stderr.on('data', (d) => (stderr += d));
		child.stdout.resume();
		const code = await new Promise<number | null>((r) => child.on('close', r));
		expect(code, stderr).toBe(2);
		expect(stderr).toMatch(/BRIDGE_SECRET is not set/);
	});

	it('starts, reports where it listens, and stops on SIGTERM', async () => {
		const child = run(['--port', '0', '--time-scale', '60', '--seed', '3'], { BRIDGE_SECRET: SECRET });
		let stdout = '';
		child.stderr.resume();
		const listening = new Promise<void>((resolveListen) =>
			child.stdout.on('data', (d) => {
				stdout += d;
				if (/listening on ws:\/\/127\.0\.0\.1:\d+\/stream/.test(stdout)) resolveListen();
			})
		);
		await listening;
		expect(stdout).toMatch(/simulator \(seed 3\): 48000 Hz × 2 ch/);
		child.kill('SIGTERM');
		expect(await new Promise<number | null>((r) => child.on('close', r))).toBe(0);
	});
});
