// Benchmark: a real-time 60-minute soak (four probes, one reading a second each = 14,400
// readings) through the soak service on a file database with synchronous=FULL: uploads in the
// page's 500-reading batches, the same batches again (all duplicates), the page's live limit
// check over the whole record, and the server's finish (summary + verdict). Modules load through
// Vite's SSR loader so `$lib` resolves as in the app.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openDb, type Db } from '../../src/lib/server/db/open';
import * as table from '../../src/lib/server/db/schema';

type SoakModule = typeof import('../../src/lib/server/soak');
type VerdictModule = typeof import('../../src/lib/soak/verdict');
type LimitsModule = typeof import('../../src/lib/soak/soak-limits');

const PROBES = ['heatsink-left', 'heatsink-right', 'transformer', 'ambient'];
const SECONDS = 3600;
const BATCH = 500;

/** First-order warm-up per probe with a little noise, one reading per probe per second. */
function syntheticHour(t0: number, seq0: number) {
	const steady = { 'heatsink-left': 62, 'heatsink-right': 61, transformer: 38, ambient: 23 } as Record<
		string,
		number
	>;
	const tau = { 'heatsink-left': 480, 'heatsink-right': 480, transformer: 1500, ambient: 1 } as Record<
		string,
		number
	>;
	const out: { probe: string; seq: number; t: number; celsius: number }[] = [];
	let seq = seq0;
	for (let s = 1; s <= SECONDS; s++) {
		for (const p of PROBES) {
			const c = steady[p] + (23 - steady[p]) * Math.exp(-s / tau[p]) + (Math.random() - 0.5) * 0.06;
			out.push({ probe: p, seq: ++seq, t: t0 + s * 1000, celsius: Math.round(c * 100) / 100 });
		}
	}
	return out;
}

function median(xs: number[]): number {
	const s = [...xs].sort((a, b) => a - b);
	return s[Math.floor(s.length / 2)];
}

export async function run(): Promise<void> {
	const dir = mkdtempSync(join(tmpdir(), 'benchlight-soak-bench-'));
	const { createServer } = await import('vite');
	const server = await createServer({
		logLevel: 'error',
		appType: 'custom',
		server: { middlewareMode: true, hmr: false, watch: null }
	});
	try {
		const soak = (await server.ssrLoadModule('/src/lib/server/soak.ts')) as SoakModule;
		const verdict = (await server.ssrLoadModule('/src/lib/soak/verdict.ts')) as VerdictModule;
		const limits = (await server.ssrLoadModule('/src/lib/soak/soak-limits.ts')) as LimitsModule;

		const db: Db = openDb(join(dir, 'bench.db'));
		db.insert(table.users)
			.values({ id: 'u1', email: 'b@example.com', name: 'Bench', role: 'technician', passwordHash: 'x' })
			.run();
		const c = db.insert(table.customers).values({ name: 'Bench' }).returning().get();
		const jobId = db
			.insert(table.jobs)
			.values({
				customerId: c.id,
				category: 'receiver',
				make: 'Vellum',
				model: 'B-1',
				complaint: 'bench',
				ratedPowerW: 100,
				ratedLoadOhms: 8
			})
			.returning()
			.get().id;
		const t0 = Date.now() - (SECONDS + 5) * 1000;
		const { id } = soak.createRun(
			db,
			jobId,
			'u1',
			{ preset: 'eighth-power-60', limits: { maxRiseCPerMin: 10 }, bridge: { lastSeq: 1000, timeScale: 1 } },
			t0
		);
		const readings = syntheticHour(t0, 1000);

		const newMs: number[] = [];
		for (let i = 0; i < readings.length; i += BATCH) {
			const start = performance.now();
			soak.addReadings(db, id, readings.slice(i, i + BATCH), 'boot-bench');
			newMs.push(performance.now() - start);
		}
		const dupMs: number[] = [];
		for (let i = 0; i < readings.length; i += BATCH) {
			const start = performance.now();
			soak.addReadings(db, id, readings.slice(i, i + BATCH), 'boot-bench');
			dupMs.push(performance.now() - start);
		}
		const totalNew = newMs.reduce((a, b) => a + b, 0);
		console.log(
			`soak: ${readings.length} readings in ${newMs.length} batches of ${BATCH} (file db, synchronous=FULL): ` +
				`${totalNew.toFixed(0)} ms, median ${median(newMs).toFixed(2)} ms/batch, ${((readings.length / totalNew) * 1000).toFixed(0)} readings/s`
		);
		console.log(
			`soak: the same batches again (all duplicates, INSERT OR IGNORE): median ${median(dupMs).toFixed(2)} ms/batch ` +
				`(${(median(dupMs) / median(newMs)).toFixed(2)}× a new batch)`
		);

		// The page runs this on every temps message (once a second) over the whole record so far.
		const clock = { startedAtMs: t0, timeScale: 1 };
		const runLimits = limits.runLimits(undefined, { maxRiseCPerMin: 10 });
		const checkMs: number[] = [];
		for (let k = 0; k < 10; k++) {
			const start = performance.now();
			verdict.findBreaches(readings, runLimits, clock);
			checkMs.push(performance.now() - start);
		}
		const steadyStart = performance.now();
		const steady = verdict.steadyStateS(readings, clock);
		const steadyMs = performance.now() - steadyStart;
		console.log(
			`soak: live limit check over the full hour (${readings.length} readings): median ${median(checkMs).toFixed(1)} ms; ` +
				`steady-state search ${steadyMs.toFixed(1)} ms (steady after ${steady === null ? 'never' : `${(steady / 60).toFixed(1)} min`})`
		);

		const finishStart = performance.now();
		const d = soak.finishRun(db, id);
		const finishMs = performance.now() - finishStart;
		console.log(
			`soak: finish (read ${d.readingCount} readings, summary, verdict ${d.verdict}, one transaction): ${finishMs.toFixed(0)} ms`
		);
		db.$client.close();

		await runDay(soak, server, dir);
	} finally {
		await server.close();
		rmSync(dir, { recursive: true, force: true });
	}
}

/**
 * A 24 h real-time run, four probes at one reading a second (345,600 readings) and a THD+N
 * sample every 10 s (8,640 events), uploaded in the page's 500-reading batches. Measures what
 * a long run costs where it used to hurt: reading the run (`GET /api/soak-runs/{id}` is
 * getRunDetail + JSON), the job's run list, an upload late in the day, and the full
 * recomputation the server did on every read before the summary was kept incrementally.
 */
async function runDay(
	soak: SoakModule,
	server: { ssrLoadModule: (id: string) => Promise<Record<string, unknown>> },
	dir: string
): Promise<void> {
	const summaryMod = (await server.ssrLoadModule(
		'/src/lib/server/soak-summary.ts'
	)) as typeof import('../../src/lib/server/soak-summary');
	const DAY_S = 86_400;
	const db: Db = openDb(join(dir, 'day.db'));
	db.insert(table.users)
		.values({ id: 'u1', email: 'd@example.com', name: 'Bench', role: 'technician', passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'Bench' }).returning().get();
	const jobId = db
		.insert(table.jobs)
		.values({
			customerId: c.id,
			category: 'receiver',
			make: 'Vellum',
			model: 'D-1',
			complaint: 'bench',
			ratedPowerW: 100,
			ratedLoadOhms: 8
		})
		.returning()
		.get().id;
	const t0 = Date.now() - (DAY_S + 5) * 1000;
	const { id } = soak.createRun(
		db,
		jobId,
		'u1',
		{
			preset: 'custom',
			custom: { watts: 12.5, frequencyHz: 1000, durationS: DAY_S, channels: ['left', 'right'] },
			limits: { maxRiseCPerMin: 10, thdnCeilingDb: -40 }
		},
		t0
	);
	const steady = { 'heatsink-left': 62, 'heatsink-right': 61, transformer: 38, ambient: 23 } as Record<
		string,
		number
	>;
	const tau = { 'heatsink-left': 480, 'heatsink-right': 480, transformer: 1500, ambient: 1 } as Record<
		string,
		number
	>;
	let seq = 1000;
	let batch: { probe: string; seq: number; t: number; celsius: number }[] = [];
	const uploadMs: number[] = [];
	const wallStart = performance.now();
	for (let s = 1; s <= DAY_S; s++) {
		for (const p of PROBES) {
			const drift = Math.sin((2 * Math.PI * s) / 86_400) * 1.5; // the room over a day
			const c = steady[p] + drift + (23 - steady[p]) * Math.exp(-s / tau[p]) + (Math.random() - 0.5) * 0.06;
			batch.push({ probe: p, seq: ++seq, t: t0 + s * 1000, celsius: Math.round(c * 100) / 100 });
		}
		if (batch.length >= BATCH || s === DAY_S) {
			const start = performance.now();
			soak.addReadings(db, id, batch, 'boot-day');
			uploadMs.push(performance.now() - start);
			batch = [];
		}
		if (s % 10 === 0 && s % 1000 === 0) {
			// THD+N samples go up in small batches too: one every 10 s.
			const events = Array.from({ length: 100 }, (_, k) => ({
				kind: 'thdn' as const,
				at: t0 + (s - 1000 + (k + 1) * 10) * 1000,
				key: `thdn-${s}-${k}`,
				detail: { thdnPercent: 0.02 + Math.random() * 0.002, channel: 'left' as const }
			}));
			soak.addEvents(db, id, events);
		}
	}
	const loadS = (performance.now() - wallStart) / 1000;
	const late = uploadMs.slice(-50);
	console.log(
		`soak 24 h: ${seq - 1000} readings in ${uploadMs.length} uploads of ${BATCH} (${loadS.toFixed(1)} s in all); ` +
			`upload median first hour ${median(uploadMs.slice(0, 28)).toFixed(1)} ms, last hour ${median(late).toFixed(1)} ms, max ${Math.max(...uploadMs).toFixed(1)} ms`
	);

	// What the page sends every few seconds late in the day: a THD+N sample and a DC reading.
	const eventMs: number[] = [];
	for (let k = 0; k < 10; k++) {
		const at = t0 + (DAY_S - 100 + k) * 1000;
		const start = performance.now();
		soak.addEvents(db, id, [
			{ kind: 'thdn', at, key: `late-thdn-${k}`, detail: { thdnPercent: 0.021, channel: 'left' } },
			{ kind: 'dc-offset', at, key: `late-dc-${k}`, detail: { channel: 'left', dcVolts: 0.004 } }
		]);
		eventMs.push(performance.now() - start);
	}
	console.log(
		`soak 24 h: an event upload late in the day (2 keyed events against ${soak.getRunDetail(db, id, t0 + (DAY_S + 4) * 1000).events.length} stored): median ${median(eventMs).toFixed(1)} ms`
	);

	const timed = (fn: () => unknown, n = 15) => {
		const ms: number[] = [];
		let bytes = 0;
		for (let k = 0; k < n; k++) {
			const start = performance.now();
			bytes = JSON.stringify(fn()).length;
			ms.push(performance.now() - start);
		}
		return { median: median(ms), max: Math.max(...ms), bytes };
	};
	const nowMs = t0 + (DAY_S + 4) * 1000;
	const running = timed(() => soak.getRunDetail(db, id, nowMs));
	const list = timed(() => soak.listRuns(db, jobId, nowMs));
	// A page reloaded late in the day: the detail (with bucket rows) and the newest readings, against
	// paging through every reading the way a resume used to.
	const tail = timed(() => soak.readingsTail(db, id, 8000));
	const allStart = performance.now();
	let after = -1;
	let pages = 0;
	for (;;) {
		const page = soak.readingsAfter(db, id, after, 20_000);
		JSON.stringify(page);
		pages++;
		if (!page.more || page.lastSeq === null) break;
		after = page.lastSeq;
	}
	const allMs = performance.now() - allStart;
	console.log(
		`soak 24 h: resuming the page loads the newest 8000 readings (${(tail.bytes / 1024).toFixed(0)} KiB) in median ${tail.median.toFixed(1)} ms; ` +
			`every reading (${pages} pages) took ${allMs.toFixed(0)} ms on the server alone (${(allMs / tail.median).toFixed(0)}× the tail)`
	);
	const row = db.select().from(table.soakRuns).all()[0];
	const fullStart = performance.now();
	summaryMod.rebuildSummary(db, row, soak.getRunDetail(db, id, nowMs).limits);
	const fullMs = performance.now() - fullStart;
	const finishStart = performance.now();
	const d = soak.finishRun(db, id, nowMs);
	const finishMs = performance.now() - finishStart;
	const ended = timed(() => soak.getRunDetail(db, id, nowMs));
	console.log(
		`soak 24 h: GET /api/soak-runs/{id} (detail + JSON, ${(running.bytes / 1024).toFixed(0)} KiB, ${d.events.length} events, ` +
			`${d.series.minutes.length} chart buckets) running: median ${running.median.toFixed(1)} ms, max ${running.max.toFixed(1)} ms; ` +
			`ended: median ${ended.median.toFixed(1)} ms (target ≤ 200 ms)`
	);
	console.log(
		`soak 24 h: GET /api/jobs/{id}/soak-runs median ${list.median.toFixed(1)} ms; finish ${finishMs.toFixed(0)} ms (verdict ${d.verdict}); ` +
			`the full recomputation a read used to do: ${fullMs.toFixed(0)} ms (${(fullMs / running.median).toFixed(0)}× the read now)`
	);
	db.$client.close();
}
