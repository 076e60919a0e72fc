// Benchmark: the real GET /api/jobs handler over a 10,000-job database with a mix of
// searches, filters, sorts and pages. Prints p50/p95 in ms (goal: p95 ≤ 50 ms).
// The route is loaded through Vite's SSR loader so `$lib` and `$app` resolve as in the app.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import type { RequestEvent } from '@sveltejs/kit';
import { openDb } from '../../src/lib/server/db/open';
import { seedDemo, seedLarge } from '../seed';

const REQUESTS = 500;

/** The query strings a busy shop sends, by kind, cycled through in order. */
const QUERIES: [kind: string, query: string][] = [
	['default', ''],
	['open', 'status=open'],
	['status', 'status=repairing'],
	['status-list', 'status=testing,awaiting-review'],
	['technician', 'technician=demotech1&status=open'],
	['unassigned', 'technician=none'],
	['search make', 'q=Corv'],
	['search complaint', 'q=hum'],
	['search customer', 'q=elmar'],
	['search serial', 'q=-10042'],
	['job number', 'q=%23777'],
	['search+filter', 'q=relay&status=open&sort=-promised'],
	['sort customer', 'sort=customer'],
	['sort make', 'sort=-make&status=open'],
	['sort promised', 'sort=promised'],
	['sort status', 'sort=status&pageSize=50'],
	['sort technician', 'sort=technician'],
	['sort created', 'sort=-created'],
	['deep page', 'page=200&pageSize=25'],
	['big page', 'pageSize=100&status=open']
];

function percentile(sorted: number[], p: number): number {
	const i = Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1));
	return sorted[i];
}

export async function run(): Promise<void> {
	const dir = mkdtempSync(join(tmpdir(), 'benchlight-jobs-bench-'));
	const file = join(dir, 'bench.db');
	const previousUrl = process.env.DATABASE_URL;
	const { createServer } = await import('vite');
	let server: Awaited<ReturnType<typeof createServer>> | undefined;
	try {
		const seedDb = openDb(file);
		await seedDemo(seedDb);
		const t0 = performance.now();
		seedLarge(seedDb, 10_000);
		const seedMs = performance.now() - t0;
		const total = (seedDb.$client.prepare('SELECT count(*) AS n FROM jobs').get() as { n: number }).n;
		seedDb.$client.close();

		// The app's db module reads DATABASE_URL when the route first loads it.
		process.env.DATABASE_URL = file;
		server = await createServer({
			logLevel: 'error',
			appType: 'custom',
			server: { middlewareMode: true, hmr: false, watch: null }
		});
		const route = (await server.ssrLoadModule('/src/routes/api/jobs/+server.ts')) as {
			GET: (event: RequestEvent) => Promise<Response> | Response;
		};
		const user = { id: 'demotech1', email: 'tech1@example.com', name: 'Bench', role: 'technician' as const };

		const call = async (query: string) => {
			const url = new URL(`http://127.0.0.1:5100/api/jobs${query ? `?${query}` : ''}`);
			const event = {
				url,
				request: new Request(url),
				params: {},
				route: { id: '/api/jobs' },
				locals: { user, session: null }
			} as unknown as RequestEvent;
			const res = await route.GET(event);
			if (res.status !== 200)
				throw new Error(`GET ${url.search} answered ${res.status}: ${await res.text()}`);
			return res.text();
		};

		for (const [, q] of QUERIES) await call(q); // warm-up: compile statements, fill caches

		const all: number[] = [];
		const byKind = new Map<string, number[]>();
		for (let i = 0; i < REQUESTS; i++) {
			const [kind, q] = QUERIES[i % QUERIES.length];
			const start = performance.now();
			await call(q);
			const ms = performance.now() - start;
			all.push(ms);
			byKind.set(kind, [...(byKind.get(kind) ?? []), ms]);
		}
		all.sort((a, b) => a - b);
		const p50 = percentile(all, 50);
		const p95 = percentile(all, 95);
		console.log(
			`jobs: seeded ${total} jobs in ${seedMs.toFixed(0)} ms (one transaction, prepared statements)`
		);
		console.log(
			`jobs: GET /api/jobs × ${REQUESTS} (${QUERIES.length} query kinds): p50 ${p50.toFixed(2)} ms, p95 ${p95.toFixed(2)} ms ` +
				`(goal p95 ≤ 50 ms: ${p95 <= 50 ? 'met' : 'NOT met'})`
		);
		const slowest = [...byKind]
			.map(
				([kind, times]) =>
					[
						kind,
						percentile(
							[...times].sort((a, b) => a - b),
							95
						)
					] as const
			)
			.sort((a, b) => b[1] - a[1])
			.slice(0, 3);
		console.log(
			`jobs: slowest kinds by p95: ${slowest.map(([k, ms]) => `${k} ${ms.toFixed(2)} ms`).join(', ')}`
		);
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
