// Benchmark: what the worst legal snapshot uploads do to everyone else. For each worst-case file
// it measures, in one run, the request thread's longest stall (event-loop delay, max) and how long
// a GET /api/jobs sent meanwhile took:
//   before — the old path: the platform's formData() parser and the analysis on the request thread;
//   after  — the route as it is: in-memory multipart split, analysis on the worker pool.
// Then four worst uploads at once through the route. On a loaded machine the stall figures include
// time the thread was not scheduled; "busy" (event-loop utilisation) counts only time running code. The route is loaded through Vite's SSR
// loader, so `$lib` and the `?node-worker` bundle resolve as in the app.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { pathToFileURL } from 'node:url';
import type { RequestEvent } from '@sveltejs/kit';
import { openDb } from '../../src/lib/server/db/open';
import * as table from '../../src/lib/server/db/schema';

const ORIGIN = 'http://127.0.0.1:5100';
const SIZE_CAP_BYTES = 32 * 1024 * 1024 - 4096;

/** Integer PCM WAV of a 0.5-peak 1 kHz sine filling `bytes`. */
function pcmWav(channels: number, rateHz: number, bits: 8 | 16, bytes: number): Uint8Array {
	const frameBytes = (bits / 8) * channels;
	const n = Math.floor((bytes - 44) / frameBytes);
	const buf = new Uint8Array(44 + n * frameBytes);
	const dv = new DataView(buf.buffer);
	const ascii = (at: number, s: string) => [...s].forEach((c, i) => (buf[at + i] = c.charCodeAt(0)));
	ascii(0, 'RIFF');
	dv.setUint32(4, 36 + n * frameBytes, true);
	ascii(8, 'WAVE');
	ascii(12, 'fmt ');
	dv.setUint32(16, 16, true);
	dv.setUint16(20, 1, true);
	dv.setUint16(22, channels, true);
	dv.setUint32(24, rateHz, true);
	dv.setUint32(28, rateHz * frameBytes, true);
	dv.setUint16(32, frameBytes, true);
	dv.setUint16(34, bits, true);
	ascii(36, 'data');
	dv.setUint32(40, n * frameBytes, true);
	let at = 44;
	for (let i = 0; i < n; i++) {
		const v = 0.5 * Math.sin((2 * Math.PI * ((1000 * i) % rateHz)) / rateHz);
		for (let c = 0; c < channels; c++) {
			if (bits === 8) buf[at++] = Math.round(v * 127) + 128;
			else {
				dv.setInt16(at, Math.round(v * 32767), true);
				at += 2;
			}
		}
	}
	return buf;
}

type Handler = (event: RequestEvent) => Promise<Response> | Response;

/**
 * Runs `work` while a 2 ms interval timer watches for the longest gap between its ticks (the
 * request thread's longest stall), and times one GET /api/jobs due 50 ms in, from when it was due.
 */
async function measure(
	work: () => Promise<unknown>,
	listJobs: () => Promise<unknown>
): Promise<{ totalMs: number; maxStallMs: number; jobsMs: number; busyMs: number }> {
	const elu0 = performance.eventLoopUtilization();
	let last = performance.now();
	let maxGap = 0;
	const ticker = setInterval(() => {
		const now = performance.now();
		maxGap = Math.max(maxGap, now - last);
		last = now;
	}, 2);
	const t0 = performance.now();
	const due = t0 + 50;
	let jobsMs = NaN;
	const probe = new Promise<void>((resolve) =>
		setTimeout(() => {
			void listJobs().then(() => {
				jobsMs = performance.now() - due;
				resolve();
			});
		}, 50)
	);
	await work();
	const totalMs = performance.now() - t0;
	await probe;
	clearInterval(ticker);
	maxGap = Math.max(maxGap, performance.now() - last);
	// Busy time counts only while the loop runs code, so a loaded machine that merely delays the
	// timer (the stall figure) does not inflate it.
	const busyMs = performance.eventLoopUtilization(elu0).active;
	return { totalMs, maxStallMs: maxGap, jobsMs, busyMs };
}

/** A multipart body as a client would send it, serialised once before the clock starts. */
function multipartBody(wav: Uint8Array, meta: object): { body: Uint8Array; type: string } {
	const boundary = `----bench${Math.random().toString(16).slice(2)}`;
	const head = new TextEncoder().encode(
		`--${boundary}\r\nContent-Disposition: form-data; name="meta"\r\n\r\n` +
			JSON.stringify({ label: 'bench', stage: 'after', ...meta }) +
			`\r\n--${boundary}\r\nContent-Disposition: form-data; name="samples"; filename="capture.wav"\r\n` +
			`Content-Type: audio/wav\r\n\r\n`
	);
	const tail = new TextEncoder().encode(`\r\n--${boundary}--\r\n`);
	const body = new Uint8Array(head.length + wav.length + tail.length);
	body.set(head);
	body.set(wav, head.length);
	body.set(tail, head.length + wav.length);
	return { body, type: `multipart/form-data; boundary=${boundary}` };
}

export async function run(): Promise<void> {
	const dir = mkdtempSync(join(tmpdir(), 'benchlight-snapshots-bench-'));
	const file = join(dir, 'bench.db');
	const previousUrl = process.env.DATABASE_URL;
	const { createServer } = await import('vite');
	let server: Awaited<ReturnType<typeof createServer>> | undefined;
	try {
		const setup = openDb(file);
		const user = {
			id: 'bench-tech',
			email: 'bench@example.com',
			name: 'Bench Tech',
			role: 'technician' as const
		};
		setup
			.insert(table.users)
			.values({ ...user, passwordHash: 'x' })
			.run();
		const customerId = setup.insert(table.customers).values({ name: 'B. Customer' }).returning().get().id;
		const newJob = () =>
			setup
				.insert(table.jobs)
				.values({ customerId, category: 'receiver', make: 'Velmora', model: 'R-40', complaint: 'hum' })
				.returning()
				.get().id;
		const jobIds = Array.from({ length: 12 }, newJob);
		setup.$client.close();

		process.env.DATABASE_URL = file;
		server = await createServer({
			logLevel: 'error',
			appType: 'custom',
			server: { middlewareMode: true, hmr: false, watch: null }
		});
		const load = (path: string) => server!.ssrLoadModule(path);
		const snapshotsRoute = (await load('/src/routes/api/jobs/[id]/snapshots/+server.ts')) as {
			POST: Handler;
		};
		const jobsRoute = (await load('/src/routes/api/jobs/+server.ts')) as { GET: Handler };
		const service = (await load(
			'/src/lib/server/snapshots.ts'
		)) as typeof import('../../src/lib/server/snapshots');
		const { db } = (await load('/src/lib/server/db/index.ts')) as typeof import('../../src/lib/server/db');
		const { analysisPool } = (await load(
			'/src/lib/server/analysis-pool.ts'
		)) as typeof import('../../src/lib/server/analysis-pool');

		const event = (url: URL, request: Request, params: Record<string, string>) =>
			({
				url,
				request,
				params,
				route: { id: url.pathname },
				locals: { user, session: null }
			}) as unknown as RequestEvent;
		const listJobs = async () => {
			const url = new URL('/api/jobs', ORIGIN);
			const res = await jobsRoute.GET(event(url, new Request(url), {}));
			if (res.status !== 200) throw new Error(`GET /api/jobs answered ${res.status}`);
			await res.text();
		};
		let next = 0;
		/** The body as a socket delivers it: 64 KiB views, pulled as the server reads (no client work). */
		const socketLike = (bytes: Uint8Array) => {
			let at = 0;
			return new ReadableStream<Uint8Array>(
				{
					pull(c) {
						if (at >= bytes.length) return c.close();
						c.enqueue(bytes.subarray(at, (at += 65_536)));
					}
				},
				{ highWaterMark: 0 }
			);
		};
		type Upload = { body: Uint8Array; type: string };
		const requestFor = (upload: Upload, jobId: number) =>
			new Request(new URL(`/api/jobs/${jobId}/snapshots`, ORIGIN), {
				method: 'POST',
				headers: { origin: ORIGIN, 'content-type': upload.type },
				body: socketLike(upload.body),
				duplex: 'half'
			} as RequestInit);
		/** The route as it is now; the request is made before the clock starts. */
		const uploadNow = (upload: Upload) => {
			const jobId = jobIds[next++ % jobIds.length];
			const request = requestFor(upload, jobId);
			return async () => {
				const res = await snapshotsRoute.POST(event(new URL(request.url), request, { id: String(jobId) }));
				if (res.status !== 201) throw new Error(`upload answered ${res.status}: ${await res.text()}`);
			};
		};
		/** The old way: the platform's multipart parser and the analysis on this thread. */
		const uploadBefore = (upload: Upload) => {
			const jobId = jobIds[next++ % jobIds.length];
			const request = requestFor(upload, jobId);
			return async () => {
				const bytes = new Uint8Array(await request.arrayBuffer());
				const form = await new Response(bytes, { headers: { 'content-type': upload.type } }).formData();
				const samples = form.get('samples') as Blob;
				service.createSnapshot(db, {
					jobId,
					userId: user.id,
					wav: new Uint8Array(await samples.arrayBuffer()),
					meta: form.get('meta')
				});
			};
		};

		const cases: [string, Uint8Array, object][] = [
			[
				'768 kHz stereo 16-bit, 4k FFT',
				pcmWav(2, 768_000, 16, SIZE_CAP_BYTES),
				{ analysis: { fftSize: 4096 } }
			],
			[
				'8 kHz mono 8-bit, 256k FFT × 64',
				pcmWav(1, 8000, 8, SIZE_CAP_BYTES),
				{ analysis: { fftSize: 262_144, averages: 64 } }
			]
		];
		await listJobs(); // warm-up
		await uploadNow(multipartBody(pcmWav(1, 48_000, 16, 1024 * 1024), {}))(); // warm-up: worker started, code compiled
		const fmt = (r: { totalMs: number; maxStallMs: number; jobsMs: number; busyMs: number }) =>
			`upload ${r.totalMs.toFixed(0)} ms, event-loop max stall ${r.maxStallMs.toFixed(0)} ms, ` +
			`request thread busy ${r.busyMs.toFixed(0)} ms, GET /api/jobs meanwhile ${r.jobsMs.toFixed(0)} ms`;
		const pool = analysisPool();
		console.log(`snapshots: worker pool ${pool.threads} thread(s), ${pool.maxQueued} queued at most`);
		for (const [name, wav, meta] of cases) {
			const upload = multipartBody(wav, meta);
			// The pool first: the inline run leaves hundreds of MiB of garbage whose collection would
			// otherwise land in the pool's figures.
			const after = await measure(uploadNow(upload), listJobs);
			const before = await measure(uploadBefore(upload), listJobs);
			console.log(`snapshots: ${name} (${(wav.length / 2 ** 20).toFixed(1)} MiB)`);
			console.log(`  before (inline): ${fmt(before)}`);
			console.log(`  after  (pool):   ${fmt(after)}`);
			console.log(
				`  stall ratio before/after ${(before.maxStallMs / Math.max(1, after.maxStallMs)).toFixed(1)}×, ` +
					`busy ratio ${(before.busyMs / Math.max(1, after.busyMs)).toFixed(1)}×, ` +
					`/api/jobs ratio ${(before.jobsMs / Math.max(1, after.jobsMs)).toFixed(1)}×`
			);
		}
		const [, worst, worstMeta] = cases[0];
		const uploads = [1, 2, 3, 4].map(() => multipartBody(worst, worstMeta));
		const sends = uploads.map((u) => uploadNow(u));
		const four = await measure(async () => {
			const results = await Promise.allSettled(sends.map((send) => send()));
			const refused = results.filter((r) => r.status === 'rejected').length;
			if (refused)
				console.log(
					`  (${refused} of 4 refused: ${(results.find((r) => r.status === 'rejected') as PromiseRejectedResult).reason})`
				);
		}, listJobs);
		console.log(`snapshots: four worst uploads at once (after): ${fmt(four)}`);
		await pool.close();
	} finally {
		await server?.close();
		if (previousUrl === undefined) delete process.env.DATABASE_URL;
		else process.env.DATABASE_URL = previousUrl;
		rmSync(dir, { recursive: true, force: true });
	}
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	run().catch((e) => {
		console.error(e);
		process.exit(1);
	});
}
