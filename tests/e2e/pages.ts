// Every page of the app, found on disk (src/routes/**/+page.svelte) so a new page is checked by the
// layout and accessibility specs without anyone remembering to list it. A page with a route
// parameter needs a sample value: add a resolver to ROUTE_PARAMS (the spec fails and says so).
import type { APIRequestContext } from '@playwright/test';
import { readdirSync } from 'node:fs';
import { join, relative, sep } from 'node:path';

const ROUTES_DIR = join(process.cwd(), 'src', 'routes');

/** Pages that are not pages to look at; each with the reason. */
const SKIPPED: Record<string, string> = {
	'/': 'only redirects (to the queue or the sign-in page)',
	'/login': 'a signed-in visitor is sent on to the queue; checked signed out (PUBLIC_PAGES)',
	'/logout': 'never rendered: GET redirects home and visiting it would sign the test out',
	'/r/[token]':
		'needs a private link, whose token is shown only in the e-mail: report.spec checks it signed out at 390 px with axe',
	'/e/[token]':
		'needs a private link, whose token is shown only in the e-mail: money.spec checks it signed out at 390 px with axe'
};

/** Pages anyone may open signed out (they are checked signed out too). */
export const PUBLIC_PAGES = ['/login', '/safety'] as const;

/**
 * Sample values for route parameters, by parameter name: each returns the value to put in the
 * URL, or several (the page is then checked once per value). Extend this when a new page brings
 * a parameter (`[token]`, `[snapshotId]` …).
 */
export const ROUTE_PARAMS: Record<string, (ctx: ParamContext) => Promise<string | string[]>> = {
	/** A job with parts, log entries and snapshots where possible: the fullest pages to lay out. */
	id: async ({ request, routeId }) =>
		String(routeId.startsWith('/snapshots/') ? await anySnapshotId(request) : await richJobId(request)),
	/** Every worksheet: each kind is its own form (steps table and chart, bias grid, safety items). */
	kind: async () => ['intake', 'power-up', 'bias', 'safety'],
	/** The seeded sign-off demo's model (its notebook has earlier units, parts, notes and typical figures). */
	make: async () => 'pellowmere',
	model: async () => 'sa150'
};

export interface ParamContext {
	/** A signed-in request context (an admin sees every page). */
	request: APIRequestContext;
	routeId: string;
}

export interface PageToCheck {
	/** The route id, as SvelteKit writes it ("/jobs/[id]/bench"). */
	routeId: string;
	/** The URL to open. */
	path: string;
}

/** Route ids of every +page.svelte, without (group) segments, sorted. */
export function routeIds(dir = ROUTES_DIR): string[] {
	const out: string[] = [];
	const walk = (d: string) => {
		for (const e of readdirSync(d, { withFileTypes: true })) {
			const p = join(d, e.name);
			if (e.isDirectory()) {
				if (relative(ROUTES_DIR, p).split(sep)[0] === 'api') continue;
				walk(p);
			} else if (e.name === '+page.svelte') {
				const rel = relative(ROUTES_DIR, d).split(sep).filter(Boolean);
				const id = '/' + rel.filter((s) => !/^\(.*\)$/.test(s)).join('/');
				out.push(id);
			}
		}
	};
	walk(dir);
	return out.sort();
}

/** Every page to open, with its parameters filled in; throws naming any parameter it cannot fill. */
export async function pagesToCheck(request: APIRequestContext): Promise<PageToCheck[]> {
	const pages: PageToCheck[] = [];
	const missing: string[] = [];
	for (const routeId of routeIds()) {
		if (SKIPPED[routeId]) continue;
		let paths = [routeId];
		for (const m of routeId.matchAll(/\[{1,2}(?:\.\.\.)?([^\]=]+)(?:=[^\]]+)?\]{1,2}/g)) {
			const resolve = ROUTE_PARAMS[m[1]];
			if (!resolve) {
				missing.push(`${routeId} needs a sample value for [${m[1]}]`);
				continue;
			}
			const values = [await resolve({ request, routeId })].flat();
			paths = paths.flatMap((p) => values.map((v) => p.replace(m[0], encodeURIComponent(v))));
		}
		for (const path of paths) pages.push({ routeId, path });
	}
	if (missing.length)
		throw new Error(`Add these to ROUTE_PARAMS in tests/e2e/pages.ts: ${missing.join('; ')}`);
	return pages;
}

let cachedJobId: number | null = null;

/** A stored snapshot (the seed's sign-off demo job has two): `[id]` under /snapshots. */
async function anySnapshotId(request: APIRequestContext): Promise<number> {
	const res = await request.get('/api/jobs?pageSize=100');
	if (!res.ok()) throw new Error(`GET /api/jobs answered ${res.status()}`);
	const list = (await res.json()) as { items: { id: number }[] };
	for (const { id } of list.items) {
		const r = await request.get(`/api/jobs/${id}/snapshots`);
		if (!r.ok()) continue;
		const { snapshots } = (await r.json()) as { snapshots: { id: number }[] };
		if (snapshots.length) return snapshots[0].id;
	}
	throw new Error('no snapshot to open: the e2e database has none');
}

async function richJobId(request: APIRequestContext): Promise<number> {
	if (cachedJobId !== null) return cachedJobId;
	const res = await request.get('/api/jobs?pageSize=100');
	if (!res.ok()) throw new Error(`GET /api/jobs answered ${res.status()}`);
	const list = (await res.json()) as { items: { id: number }[] };
	let best: { id: number; score: number } | null = null;
	for (const { id } of list.items) {
		const r = await request.get(`/api/jobs/${id}`);
		if (!r.ok()) continue;
		const job = (await r.json()) as { parts?: unknown[]; log?: unknown[] };
		// Files too: the gallery and the WAV figures are laid out and checked where they exist.
		const f = await request.get(`/api/jobs/${id}/files`);
		const files = f.ok() ? ((await f.json()) as { files: unknown[] }).files.length : 0;
		const score = (job.parts?.length ?? 0) * 10 + (job.log?.length ?? 0) + files * 10;
		if (!best || score > best.score) best = { id, score };
	}
	if (!best) throw new Error('no job to open: the e2e database is not seeded');
	cachedJobId = best.id;
	return best.id;
}
