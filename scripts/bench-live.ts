// `npm run bench:live`: the bench page under a real stream. Starts its own bridge simulator at
// 96 kHz stereo, serves the built app on a spare port with a fresh demo database, drives the page
// in headless Chromium with a 65,536-point FFT and prints spectrum updates per second, p95
// frame-to-paint latency, dropped frames, the longest main-thread task and the JS heap.
//
//   npm run bench:live -- [--duration 120] [--fft 65536] [--rebuild]
//
// Uses build/ when it exists (build it first with `npx vite build`, or pass --rebuild).
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { existsSync, mkdtempSync, rmSync, statSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { chromium, type Page } from '@playwright/test';
import { CHROMIUM_ARGS, CHROMIUM_EXECUTABLE } from '../tests/chromium';

const root = resolve(import.meta.dirname, '..');
const { values: opts } = parseArgs({
	options: {
		duration: { type: 'string', default: '120' },
		fft: { type: 'string', default: '65536' },
		rate: { type: 'string', default: '96000' },
		rebuild: { type: 'boolean', default: false }
	}
});
const durationS = Number(opts.duration);
const fftSize = Number(opts.fft);
if (!(durationS > 0) || ![4096, 8192, 16384, 32768, 65536, 131072, 262144].includes(fftSize)) {
	console.error('usage: npm run bench:live -- [--duration SECONDS] [--fft 4096…262144] [--rebuild]');
	process.exit(2);
}

const children: ChildProcess[] = [];
let tmp: string | null = null;

function cleanup(): void {
	for (const c of children) {
		if (c.pid && c.exitCode === null) {
			try {
				process.kill(-c.pid, 'SIGTERM');
			} catch {
				c.kill('SIGTERM');
			}
		}
	}
	if (tmp) rmSync(tmp, { recursive: true, force: true });
}
process.on('SIGINT', () => {
	cleanup();
	process.exit(130);
});

function freePort(): Promise<number> {
	return new Promise((ok, fail) => {
		const srv = createServer();
		srv.unref();
		srv.on('error', fail);
		srv.listen(0, '127.0.0.1', () => {
			const addr = srv.address();
			srv.close(() => (typeof addr === 'object' && addr ? ok(addr.port) : fail(new Error('no port'))));
		});
	});
}

function start(name: string, cmd: string, args: string[], env: NodeJS.ProcessEnv): ChildProcess {
	// Own process group, so cleanup ends the child and anything it started.
	const child = spawn(cmd, args, { cwd: root, env, detached: true, stdio: ['ignore', 'pipe', 'pipe'] });
	let tail = '';
	const keep = (b: Buffer) => {
		tail = (tail + b.toString()).slice(-4000);
	};
	child.stdout?.on('data', keep);
	child.stderr?.on('data', keep);
	child.on('exit', (code) => {
		if (code && code !== 0 && code !== 143) console.error(`[${name}] exited with ${code}\n${tail}`);
	});
	children.push(child);
	return child;
}

async function waitFor(what: string, ok: () => Promise<boolean>, timeoutMs = 60_000): Promise<void> {
	const until = Date.now() + timeoutMs;
	while (Date.now() < until) {
		if (await ok().catch(() => false)) return;
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error(`timed out waiting for ${what}`);
}

function percentile(values: number[], p: number): number {
	if (values.length === 0) return NaN;
	const s = [...values].sort((a, b) => a - b);
	return s[Math.min(s.length - 1, Math.max(0, Math.ceil((p / 100) * s.length) - 1))];
}

interface PageStats {
	results: number;
	spectrumPaints: number;
	frameToPaintMs: number[];
	frameGapsMs: number[];
	longestTaskMs: number;
	analysisMs: number;
	droppedFrames: number;
	framesReceived: number;
}

async function readStats(page: Page): Promise<PageStats> {
	return page.evaluate(() => {
		const s = (window as unknown as { __benchlightStats: Record<string, unknown> }).__benchlightStats as {
			results: number;
			spectrumPaints: number;
			frameToPaintMs: number[];
			frameGapsMs: number[];
			longestTaskMs: number;
			analysisMs: number;
			droppedFrames: () => number;
			framesReceived: () => number;
		};
		return {
			results: s.results,
			spectrumPaints: s.spectrumPaints,
			frameToPaintMs: [...s.frameToPaintMs],
			frameGapsMs: [...s.frameGapsMs],
			longestTaskMs: s.longestTaskMs,
			analysisMs: s.analysisMs,
			droppedFrames: s.droppedFrames(),
			framesReceived: s.framesReceived()
		};
	});
}

async function main(): Promise<void> {
	const secret =
		process.env.BRIDGE_SECRET && process.env.BRIDGE_SECRET.length >= 32
			? process.env.BRIDGE_SECRET
			: randomBytes(24).toString('hex');
	const appPort = await freePort();
	const bridgePort = await freePort();
	const origin = `http://127.0.0.1:${appPort}`;
	const bridgeUrl = `ws://127.0.0.1:${bridgePort}`;

	if (opts.rebuild || !existsSync(join(root, 'build/index.js'))) {
		console.log('Building the app (npx vite build)…');
		const r = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { cwd: root, stdio: 'inherit' });
		if (r.status !== 0) throw new Error('vite build failed');
	} else {
		console.log(
			`Using the existing build/ (${statSync(join(root, 'build/index.js')).mtime.toISOString()}); --rebuild to refresh it`
		);
	}

	tmp = mkdtempSync(join(tmpdir(), 'benchlight-live-'));
	const env = {
		...process.env,
		DATABASE_URL: join(tmp, 'bench.db'),
		BRIDGE_SECRET: secret,
		BRIDGE_URL: bridgeUrl,
		BRIDGE_ALLOWED_ORIGINS: origin,
		ORIGIN: origin,
		HOST: '127.0.0.1',
		PORT: String(appPort),
		SMTP_PORT: String(await freePort())
	};
	const seeded = spawnSync('npx', ['tsx', 'scripts/seed.ts'], {
		cwd: root,
		env,
		stdio: ['ignore', 'ignore', 'inherit']
	});
	if (seeded.status !== 0) throw new Error('seeding the benchmark database failed');

	start(
		'bridge',
		process.execPath,
		[
			'--import',
			'tsx',
			'bridge/main.ts',
			'--host',
			'127.0.0.1',
			'--port',
			String(bridgePort),
			'--rate',
			opts.rate!,
			'--channels',
			'2'
		],
		env
	);
	start('app', process.execPath, ['build'], env);
	await waitFor('the app', async () => (await fetch(`${origin}/safety`)).ok);
	await waitFor(
		'the bridge',
		async () => (await fetch(`http://127.0.0.1:${bridgePort}/`).catch(() => null)) !== null
	);

	const browser = await chromium.launch({ executablePath: CHROMIUM_EXECUTABLE, args: CHROMIUM_ARGS });
	try {
		const context = await browser.newContext({ viewport: { width: 1600, height: 1200 } });
		await context.addInitScript((url) => localStorage.setItem('benchlight-bridge-url', url), bridgeUrl);
		const page = await context.newPage();
		page.on('pageerror', (e) => console.error('page error:', e.message));

		await page.goto(`${origin}/login`);
		await page.locator('html[data-hydrated="true"]').waitFor({ state: 'attached' });
		await page.getByLabel('E-mail').fill('tech1@example.com');
		await page.getByLabel('Password').fill('bench-demo-2026');
		await page.getByRole('button', { name: 'Sign in' }).click();
		await page.waitForURL(/\/jobs$/);

		await page.goto(`${origin}/jobs/1/bench?fft=${fftSize}`);
		try {
			await page
				.getByTestId('link-state')
				.filter({ hasText: /^\s*Connected\s*$/ })
				.waitFor({ timeout: 30_000 });
		} catch (e) {
			await page.screenshot({ path: join(tmpdir(), 'bench-live-failure.png') }).catch(() => {});
			const why =
				(await page
					.getByTestId('link-status')
					.textContent({ timeout: 2000 })
					.catch(() => null)) ??
				`page ${page.url()} (screenshot in ${join(tmpdir(), 'bench-live-failure.png')})`;
			throw new Error(
				`the page did not connect to the bridge at ${bridgeUrl}: ${why?.replace(/\s+/g, ' ').trim()}`,
				{ cause: e }
			);
		}
		await page.getByTestId('gen-kind').selectOption('sine');
		await page.getByTestId('gen-frequency').fill('1000');
		await page.getByTestId('gen-level').fill('0.5');
		await page.getByTestId('gen-apply').click();
		await page
			.getByTestId('set-fft')
			.locator(`option[value="${fftSize}"]:checked`)
			.waitFor({ state: 'attached' });
		await page.waitForFunction(() => {
			const s = (window as unknown as { __benchlightStats?: { spectrumPaints: number } }).__benchlightStats;
			return !!s && s.spectrumPaints > 20;
		});

		// Warm up (JIT, first allocations), then measure from a clean slate.
		await page.waitForTimeout(10_000);
		const cdp = await context.newCDPSession(page);
		await cdp.send('HeapProfiler.collectGarbage');
		const heapStart = (await cdp.send('Runtime.getHeapUsage')).usedSize;
		const before = await readStats(page);
		await page.evaluate(() =>
			(window as unknown as { __benchlightStats: { reset(): void } }).__benchlightStats.reset()
		);
		const t0 = Date.now();
		console.log(
			`Measuring for ${durationS} s: ${Number(opts.rate) / 1000} kHz stereo, ${fftSize}-point FFT, 1 kHz sine…`
		);
		while (Date.now() - t0 < durationS * 1000) {
			await page.waitForTimeout(Math.min(15_000, durationS * 1000 - (Date.now() - t0)));
			const s = await readStats(page);
			const el = (Date.now() - t0) / 1000;
			console.log(
				`  ${el.toFixed(0).padStart(4)} s  ${(s.spectrumPaints / el).toFixed(1)} updates/s, dropped ${s.droppedFrames - before.droppedFrames}`
			);
		}
		const elapsedS = (Date.now() - t0) / 1000;
		const after = await readStats(page);
		await cdp.send('HeapProfiler.collectGarbage');
		const heapEnd = (await cdp.send('Runtime.getHeapUsage')).usedSize;

		const updatesPerS = after.spectrumPaints / elapsedS;
		const p95 = percentile(after.frameToPaintMs, 95);
		const p50 = percentile(after.frameToPaintMs, 50);
		const dropped = after.droppedFrames - before.droppedFrames;
		const frames = after.framesReceived - before.framesReceived;
		const mb = (b: number) => `${(b / 1024 / 1024).toFixed(2)} MB`;
		const verdict = (ok: boolean) => (ok ? 'meets goal' : 'MISSES goal');
		console.log(`
Bench page, live (${elapsedS.toFixed(0)} s, ${Number(opts.rate) / 1000} kHz stereo, ${fftSize}-point FFT, 2-core machine)
  spectrum updates          ${updatesPerS.toFixed(1)} /s            (goal ≥ 15/s: ${verdict(updatesPerS >= 15)})
  frame-to-paint latency    p50 ${p50.toFixed(1)} ms, p95 ${p95.toFixed(1)} ms   (goal p95 ≤ 100 ms: ${verdict(p95 <= 100)})
  dropped frames            ${dropped} of ${frames} received  (goal 0: ${verdict(dropped === 0)})
  longest main-thread task  ${after.longestTaskMs.toFixed(0)} ms (PerformanceObserver longtask; 0 = none over 50 ms)
  JS heap (main, after GC)  start ${mb(heapStart)}, end ${mb(heapEnd)}, change ${mb(heapEnd - heapStart)}  (goal no growth: ${verdict(heapEnd - heapStart < 1024 * 1024)})
  worker analysis time      ${after.analysisMs.toFixed(1)} ms for the last update (both channels)
  frame arrival gaps        p5 ${percentile(after.frameGapsMs, 5).toFixed(1)} ms, p50 ${percentile(after.frameGapsMs, 50).toFixed(1)} ms, p95 ${percentile(after.frameGapsMs, 95).toFixed(1)} ms (block ${((4096 / Number(opts.rate)) * 1000).toFixed(1)} ms)
  ratio paints/results      ${(after.spectrumPaints / Math.max(1, after.results)).toFixed(3)}`);
	} finally {
		await browser.close();
	}
}

main()
	.then(() => {
		cleanup();
		process.exit(0);
	})
	.catch((e) => {
		console.error(e instanceof Error ? e.message : e);
		cleanup();
		process.exit(1);
	});
