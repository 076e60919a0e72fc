// Benchmark: what drawing the customer report's PDF does to everyone else. The request thread's
// longest stall (a 2 ms timer's largest gap) and its busy time while five reports are drawn,
// measured in one run: inline on the request thread (the old way) and on the PDF worker (the
// way the app does it). The worker path is loaded through Vite's SSR loader, so the `?node-worker`
// bundle resolves as in the app.
import { performance } from 'node:perf_hooks';
import { eq } from 'drizzle-orm';
import { openDb } from '../../src/lib/server/db/open';
import * as table from '../../src/lib/server/db/schema';
import { buildReport } from '../../src/lib/server/report';
import { renderReportPdf } from '../../src/lib/server/report-pdf';
import { seedDemo } from '../seed';

async function watch(
	work: () => Promise<unknown>
): Promise<{ totalMs: number; maxStallMs: number; busyMs: number }> {
	const elu0 = performance.eventLoopUtilization();
	let last = performance.now();
	let maxGap = 0;
	const ticker = setInterval(() => {
		const now = performance.now();
		maxGap = Math.max(maxGap, now - last);
		last = now;
	}, 2);
	const t0 = performance.now();
	await work();
	const totalMs = performance.now() - t0;
	clearInterval(ticker);
	maxGap = Math.max(maxGap, performance.now() - last);
	return { totalMs, maxStallMs: maxGap, busyMs: performance.eventLoopUtilization(elu0).active };
}

export async function run(): Promise<void> {
	const db = openDb(':memory:');
	const log = console.log;
	console.log = () => {};
	await seedDemo(db);
	console.log = log;
	const job = db.select().from(table.jobs).where(eq(table.jobs.model, 'SA-150')).get()!;
	const model = buildReport(db, job.id);
	const { createServer } = await import('vite');
	const server = await createServer({
		logLevel: 'error',
		appType: 'custom',
		server: { middlewareMode: true, hmr: false, watch: null }
	});
	try {
		const { renderPdf } = (await server.ssrLoadModule(
			'/src/lib/server/pdf-renderer.ts'
		)) as typeof import('../../src/lib/server/pdf-renderer');
		// Warm both paths (fonts read, worker started) before measuring.
		await renderReportPdf(model);
		await renderPdf({ kind: 'report', model });
		const N = 5;
		const inline = await watch(async () => {
			for (let i = 0; i < N; i++) await renderReportPdf(model);
		});
		const worker = await watch(async () => {
			for (let i = 0; i < N; i++) await renderPdf({ kind: 'report', model });
		});
		const f = (n: number) => n.toFixed(1).padStart(7);
		console.log(
			`${N} report PDFs of the demo sign-off job (${(await renderReportPdf(model)).length} bytes each)`
		);
		console.log(
			`  inline on the request thread: total ${f(inline.totalMs)} ms, longest stall ${f(inline.maxStallMs)} ms, busy ${f(inline.busyMs)} ms`
		);
		console.log(
			`  on the PDF worker:            total ${f(worker.totalMs)} ms, longest stall ${f(worker.maxStallMs)} ms, busy ${f(worker.busyMs)} ms`
		);
		console.log(
			`  longest stall ${(inline.maxStallMs / worker.maxStallMs).toFixed(0)}× shorter on the worker`
		);
	} finally {
		await server.close();
	}
}
