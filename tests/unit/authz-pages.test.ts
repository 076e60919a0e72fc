// The authorization matrix for pages: every `+page.server.ts` under src/routes, its load and
// each of its form actions, with the outcome for signed-out, technician, supervisor and admin
// callers, run against the real loads and actions on the seeded in-memory database. Page files
// are found on disk; a load or an action without a row here fails the suite. The hook's
// private-by-default gate (PUBLIC_ROUTES) is checked against the same pages.
import { beforeAll, describe, expect, it } from 'vitest';
import { relative } from 'node:path';
import { pathToFileURL } from 'node:url';
import { isActionFailure, isHttpError, isRedirect, type RequestEvent } from '@sveltejs/kit';
import { DEMO_PASSWORD } from '../../scripts/seed';
import { handle, PUBLIC_ROUTES } from '../../src/hooks.server';
import { createSnapshot } from '$lib/server/snapshots';
import { createCustomerLink } from '$lib/server/customer-links';
import { encodeWav } from '$lib/dsp';
import {
	ROLES,
	ROUTES_DIR,
	fakeCookies,
	fillRoute,
	findServerFiles,
	routeIdOf,
	setupFixtures,
	useSavepoints,
	type Caller,
	type Fixtures,
	type Who
} from './authz-fixtures';

/**
 * What a caller gets: 200 (the load's data, or an action's success), another status (an error
 * page or a refused action), `login` (sent to the sign-in page) or `→ /path` (sent elsewhere;
 * numeric path segments read `[id]`).
 */
type Outcome = number | 'login' | `→ ${string}`;

interface PageRequest {
	params?: Record<string, string>;
	/** Query string including the leading `?`. */
	query?: string;
}

interface LoadRow {
	route: string;
	/** Outcome for [signed-out, technician, supervisor, admin]. */
	expect: [Outcome, Outcome, Outcome, Outcome];
	request?: (fx: Fixtures) => PageRequest;
}

interface ActionRow {
	route: string;
	action: string;
	/** Outcome for [signed-out, technician, supervisor, admin] with a valid request. */
	expect: [Outcome, Outcome, Outcome, Outcome];
	/** Params and form fields of a valid request (runs inside the case's savepoint). */
	request?: (fx: Fixtures) => PageRequest & { form?: Record<string, string> };
}

const OK = 200;
/** The seeded sign-off demo's model, as notebook route params. */
const NOTEBOOK_MODEL = { make: 'pellowmere', model: 'sa150' };
const job = (fx: Fixtures) => ({ params: { id: String(fx.jobId) } });

/** A snapshot stored inside the case's savepoint (rolled back after), as a route param. */
function snapshotIn(fx: Fixtures): string {
	const n = 8192;
	const tone = new Float32Array(n);
	for (let i = 0; i < n; i++) tone[i] = 0.5 * Math.sin((2 * Math.PI * 1000 * i) / 48000);
	const created = createSnapshot(fx.db, {
		jobId: fx.jobId,
		userId: fx.users.tech1,
		wav: encodeWav([tone], 48000),
		meta: { label: 'Page matrix snapshot', stage: 'before' }
	});
	return String(created.id);
}

/** A customer report link made inside the case's savepoint: its token (for /r/[token]) and id. */
function reportLinkIn(fx: Fixtures): { token: string; id: number } {
	const { token, id } = createCustomerLink(fx.db, {
		jobId: fx.jobId,
		purpose: 'report',
		createdBy: fx.users.supervisor,
		lifetimeDays: 30
	});
	return { token, id };
}

/** A customer estimate link made inside the case's savepoint (nothing sent on it yet). */
function estimateLinkIn(fx: Fixtures): { token: string; id: number } {
	return createCustomerLink(fx.db, {
		jobId: fx.jobId,
		purpose: 'estimate',
		createdBy: fx.users.supervisor,
		lifetimeDays: 30
	});
}

/* ─────────────────────────────────────────────────────────────────────────────
 * THE PAGE MATRIX. Every `+page.server.ts` load and every form action needs exactly one
 * row. Add or update the row in the same change as the page.
 * ───────────────────────────────────────────────────────────────────────────── */
const LOADS: LoadRow[] = [
	{ route: '/', expect: ['login', '→ /jobs', '→ /jobs', '→ /jobs'] },
	{ route: '/login', expect: [OK, '→ /jobs', '→ /jobs', '→ /jobs'] },
	// A GET never signs anyone out.
	{ route: '/logout', expect: ['→ /', '→ /', '→ /', '→ /'] },
	{ route: '/account', expect: ['login', OK, OK, OK] },
	{ route: '/jobs', expect: ['login', OK, OK, OK], request: () => ({ query: '?status=open&sort=-updated' }) },
	{ route: '/jobs/new', expect: ['login', OK, OK, OK] },
	{ route: '/jobs/[id]', expect: ['login', OK, OK, OK], request: job },
	{ route: '/jobs/[id]/bench', expect: ['login', OK, OK, OK], request: job },
	{ route: '/jobs/[id]/soak', expect: ['login', OK, OK, OK], request: job },
	{
		route: '/jobs/[id]/worksheets/[kind]',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({ params: { ...job(fx).params, kind: 'power-up' } })
	},
	{ route: '/jobs/[id]/report', expect: ['login', OK, OK, OK], request: job },
	{ route: '/jobs/[id]/estimate', expect: ['login', OK, OK, OK], request: job },
	// The customer's estimate link: public, the token is the key.
	{
		route: '/e/[token]',
		expect: [OK, OK, OK, OK],
		request: (fx) => ({ params: { token: estimateLinkIn(fx).token } })
	},
	{ route: '/dev/mail', expect: ['login', 403, 403, OK] },
	// The customer's private link: public, the token is the key.
	{
		route: '/r/[token]',
		expect: [OK, OK, OK, OK],
		request: (fx) => ({ params: { token: reportLinkIn(fx).token } })
	},
	{
		route: '/jobs/[id]/compare',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({ ...job(fx), query: `?s=${snapshotIn(fx)},${snapshotIn(fx)}` })
	},
	{
		route: '/snapshots/[id]',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({ params: { id: snapshotIn(fx) } })
	},
	// Review and sign off, and the audit trail: supervisors and admins.
	{
		route: '/jobs/[id]/review',
		expect: ['login', 403, OK, OK],
		request: (fx) => ({ params: { id: String(fx.signOffJobId) } })
	},
	{ route: '/audit', expect: ['login', 403, OK, OK], request: () => ({ query: '?action=job.' }) },
	{ route: '/limit-profiles', expect: ['login', OK, OK, OK] },
	{ route: '/admin/users', expect: ['login', 403, 403, OK] },
	{ route: '/admin/settings', expect: ['login', 403, 403, OK] },
	// The model notebooks: everyone signed in.
	{ route: '/models', expect: ['login', OK, OK, OK], request: () => ({ query: '?q=pellowmere' }) },
	{
		route: '/models/[make]/[model]',
		expect: ['login', OK, OK, OK],
		request: () => ({ params: NOTEBOOK_MODEL })
	}
];

const ACTIONS: ActionRow[] = [
	// A model's adjustment notes: everyone signed in writes them (version 0: the demo has none yet).
	{
		route: '/models/[make]/[model]',
		action: 'notes',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({
			params: NOTEBOOK_MODEL,
			form: {
				version: String(
					(
						fx.db.$client
							.prepare('SELECT version FROM model_notes WHERE model_key = ?')
							.get('pellowmere/sa150') as { version: number } | undefined
					)?.version ?? 0
				),
				text: 'Idle current 22 mA per side (page matrix)'
			}
		})
	},
	// Signing in while signed in is allowed: the browser's old session ends.
	{
		route: '/login',
		action: 'default',
		expect: ['→ /jobs', '→ /jobs', '→ /jobs', '→ /jobs'],
		request: () => ({ form: { email: 'tech2@example.com', password: DEMO_PASSWORD, next: '/jobs' } })
	},
	{ route: '/logout', action: 'default', expect: ['login', 'login', 'login', 'login'] },
	{
		route: '/account',
		action: 'password',
		expect: ['login', OK, OK, OK],
		request: () => ({
			form: {
				currentPassword: DEMO_PASSWORD,
				newPassword: 'walnut ferry compass',
				confirmPassword: 'walnut ferry compass'
			}
		})
	},
	{
		route: '/jobs/new',
		action: 'default',
		expect: ['login', '→ /jobs/[id]', '→ /jobs/[id]', '→ /jobs/[id]'],
		request: () => ({
			form: {
				customerName: 'Matrix Customer',
				category: 'tuner',
				make: 'Orlund',
				model: 'OT-1',
				complaint: 'No FM'
			}
		})
	},
	{
		route: '/jobs/[id]',
		action: 'status',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({ ...job(fx), form: { status: 'diagnosing', note: 'Bench time' } })
	},
	{
		route: '/jobs/[id]/review',
		action: 'sign',
		expect: ['login', 403, '→ /jobs/[id]', '→ /jobs/[id]'],
		request: (fx) => ({
			params: { id: String(fx.signOffJobId) },
			form: { decision: 'approve', comment: 'Within limits', password: DEMO_PASSWORD }
		})
	},
	{
		route: '/jobs/[id]',
		action: 'reopen',
		expect: ['login', 403, OK, OK],
		request: (fx) => ({
			params: { id: String(fx.approvedJobId) },
			form: { reason: 'Customer reports the hum is back' }
		})
	},
	{
		route: '/jobs/[id]',
		action: 'assign',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({ ...job(fx), form: { technicianId: fx.users.tech2 } })
	},
	{
		// A supervisor's send is refused by the service on an unsigned job (409), after the guard.
		route: '/jobs/[id]/report',
		action: 'send',
		expect: ['login', 403, 409, 409],
		request: job
	},
	{
		route: '/jobs/[id]/report',
		action: 'revoke',
		expect: ['login', 403, OK, OK],
		request: (fx) => ({ ...job(fx), form: { linkId: String(reportLinkIn(fx).id) } })
	},
	// Estimates and money: everyone signed in drafts and records counter payments; supervisors
	// send, issue the invoice and revoke links. The customer's link answers signed out.
	{
		route: '/jobs/[id]/estimate',
		action: 'save',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({
			...job(fx),
			form: {
				lines: JSON.stringify([{ kind: 'fee', description: 'Diagnosis fee', amountMinor: 2500 }]),
				note: ''
			}
		})
	},
	{
		// No such draft: the role guard answers first, then the service.
		route: '/jobs/[id]/estimate',
		action: 'send',
		expect: ['login', 403, 404, 404],
		request: (fx) => ({ ...job(fx), form: { estimateId: '999999' } })
	},
	{
		route: '/jobs/[id]/estimate',
		action: 'counter',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({
			...job(fx),
			form: { kind: 'payment', method: 'cash', amount: '5.00', reference: '' }
		})
	},
	{
		// The fixture job is not signed off: supervisors get the 409 that says so.
		route: '/jobs/[id]/estimate',
		action: 'invoice',
		expect: ['login', 403, 409, 409],
		request: job
	},
	{
		route: '/jobs/[id]/estimate',
		action: 'revoke',
		expect: ['login', 403, OK, OK],
		request: (fx) => ({ ...job(fx), form: { linkId: String(estimateLinkIn(fx).id) } })
	},
	{
		// Nothing has been sent on the link: a 409 for anyone, signed in or not.
		route: '/e/[token]',
		action: 'decide',
		expect: [409, 409, 409, 409],
		request: (fx) => ({
			params: { token: estimateLinkIn(fx).token },
			form: { decision: 'decline', reason: 'Not now', seenSha256: 'a'.repeat(64) }
		})
	},
	{
		route: '/e/[token]',
		action: 'pay',
		expect: [409, 409, 409, 409],
		request: (fx) => ({ params: { token: estimateLinkIn(fx).token }, form: { purpose: 'deposit' } })
	},
	{
		route: '/jobs/[id]',
		action: 'rating',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({
			...job(fx),
			form: { ratedPowerW: '60', ratedLoadOhms: '8', ratedPowerBasis: 'continuous-per-channel' }
		})
	},
	{
		route: '/jobs/[id]',
		action: 'log',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({ ...job(fx), form: { text: 'Checked the fuse', minutes: '5' } })
	},
	{
		route: '/jobs/[id]',
		action: 'addPart',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({
			...job(fx),
			form: {
				refDes: 'F1',
				description: 'Fuse, slow-blow',
				quantity: '1',
				unitCost: '0.40',
				state: 'ordered'
			}
		})
	},
	{
		route: '/jobs/[id]',
		action: 'partState',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({
			params: { id: String(fx.partJobId) },
			form: { partId: String(fx.partId), state: 'fitted' }
		})
	},
	{
		route: '/jobs/[id]',
		action: 'deletePart',
		expect: ['login', OK, OK, OK],
		request: (fx) => ({ params: { id: String(fx.partJobId) }, form: { partId: String(fx.partId) } })
	},
	{
		route: '/admin/users',
		action: 'create',
		expect: ['login', 403, 403, OK],
		request: () => ({
			form: {
				email: 'new.tech@example.com',
				name: 'New Tech',
				role: 'technician',
				password: 'walnut ferry compass'
			}
		})
	},
	{
		route: '/admin/users',
		action: 'role',
		expect: ['login', 403, 403, OK],
		request: (fx) => ({ form: { id: fx.users.tech2, role: 'supervisor' } })
	},
	{
		route: '/admin/users',
		action: 'active',
		expect: ['login', 403, 403, OK],
		request: (fx) => ({ form: { id: fx.users.tech2, active: 'false' } })
	},
	{
		route: '/admin/settings',
		action: 'default',
		expect: ['login', 403, 403, OK],
		request: () => ({
			form: {
				shopName: 'Matrix Audio',
				bridgeUrl: 'ws://127.0.0.1:8787',
				mainsHz: '50',
				maxHeatsinkC: '70',
				maxRiseCPerMin: '2',
				maxDiffC: '10',
				thdnCeilingDb: '',
				requireAfterSnapshotPass: 'on',
				requirePassedSoak: 'on'
			}
		})
	}
];

// ── discovery ───────────────────────────────────────────────────────────────

type Fn = (event: RequestEvent) => unknown;
interface PageModule {
	file: string;
	routeId: string;
	load?: Fn;
	actions: Record<string, Fn>;
}

const pages: PageModule[] = [];
let fx: Fixtures;
let callers: Record<Caller, Who>;

beforeAll(async () => {
	for (const file of findServerFiles(ROUTES_DIR, ['+page.server.ts', '+page.server.js'])) {
		const mod = (await import(/* @vite-ignore */ pathToFileURL(file).href)) as {
			load?: Fn;
			actions?: Record<string, Fn>;
		};
		pages.push({ file, routeId: routeIdOf(file), load: mod.load, actions: mod.actions ?? {} });
	}
	({ fx, callers } = await setupFixtures());
});

useSavepoints();

// ── calling a load or an action like SvelteKit does ────────────────────────

const ORIGIN = 'http://127.0.0.1:5173';

function makeEvent(
	routeId: string,
	who: Who,
	spec: PageRequest,
	form?: Record<string, string>
): RequestEvent {
	const params = spec.params ?? {};
	const url = new URL(fillRoute(routeId, params) + (spec.query ?? ''), ORIGIN);
	let request: Request;
	if (form) {
		const body = new FormData();
		for (const [k, v] of Object.entries(form)) body.set(k, v);
		request = new Request(url, { method: 'POST', body, headers: { origin: ORIGIN } });
	} else request = new Request(url);
	return {
		request,
		url,
		params,
		route: { id: routeId },
		locals: { user: who.user, session: who.session },
		cookies: fakeCookies(),
		fetch: (...args: Parameters<typeof fetch>) => fetch(...args),
		getClientAddress: () => '127.0.0.1',
		platform: undefined,
		setHeaders: () => {},
		parent: async () => ({ user: who.user }),
		depends: () => {},
		untrack: <T>(fn: () => T) => fn(),
		isDataRequest: false,
		isSubRequest: false,
		isRemoteRequest: false
	} as unknown as RequestEvent;
}

function redirectOutcome(location: string): Outcome {
	const path = location.split('?')[0];
	if (path === '/login') return 'login';
	return `→ ${path.replace(/\/\d+(?=\/|$)/g, '/[id]')}`;
}

async function outcomeOf(fn: Fn, event: RequestEvent): Promise<{ outcome: Outcome; detail: unknown }> {
	try {
		const out = await fn(event);
		if (isActionFailure(out)) return { outcome: out.status, detail: out.data };
		return { outcome: OK, detail: null };
	} catch (e) {
		if (isRedirect(e)) return { outcome: redirectOutcome(e.location), detail: e.location };
		if (isHttpError(e)) return { outcome: e.status, detail: e.body };
		throw e;
	}
}

function pageFor(route: string): PageModule {
	const page = pages.find((p) => p.routeId === route);
	if (!page) throw new Error(`No +page.server.ts for ${route}: remove or fix the row`);
	return page;
}

// ── the checks ──────────────────────────────────────────────────────────────

describe('page authorization matrix', () => {
	it('has exactly one row for every page load and form action on disk', () => {
		expect(pages.length).toBeGreaterThan(0);
		const onDisk = pages
			.flatMap((p) => [
				...(p.load ? [`load ${p.routeId}`] : []),
				...Object.keys(p.actions).map((a) => `action ${p.routeId} ?/${a}`)
			])
			.sort();
		const inTable = [
			...LOADS.map((r) => `load ${r.route}`),
			...ACTIONS.map((r) => `action ${r.route} ?/${r.action}`)
		].sort();
		const missing = onDisk.filter((k) => !inTable.includes(k));
		const stale = inTable.filter((k) => !onDisk.includes(k));
		const duplicated = inTable.filter((k, i) => inTable.indexOf(k) !== i);
		expect({ missing, stale, duplicated }).toEqual({ missing: [], stale: [], duplicated: [] });
	});

	for (const row of LOADS) {
		for (const [i, caller] of ROLES.entries()) {
			it(`load ${row.route} as ${caller} → ${row.expect[i]}`, async () => {
				const page = pageFor(row.route);
				if (!page.load) throw new Error(`${row.route} has no load: remove the row`);
				const event = makeEvent(row.route, callers[caller], row.request?.(fx) ?? {});
				const { outcome, detail } = await outcomeOf(page.load, event);
				expect(outcome, JSON.stringify(detail)).toBe(row.expect[i]);
			});
		}
	}

	for (const row of ACTIONS) {
		for (const [i, caller] of ROLES.entries()) {
			it(`action ${row.route} ?/${row.action} as ${caller} → ${row.expect[i]}`, async () => {
				const action = pageFor(row.route).actions[row.action];
				if (!action) throw new Error(`${row.route} has no action ${row.action}: remove the row`);
				const spec = row.request?.(fx) ?? {};
				const event = makeEvent(row.route, callers[caller], spec, spec.form ?? {});
				const { outcome, detail } = await outcomeOf(action, event);
				expect(outcome, JSON.stringify(detail)).toBe(row.expect[i]);
			});
		}
	}
});

describe('private by default', () => {
	it('the hook sends a signed-out visitor to sign in on every page but the public ones', async () => {
		const seen: Record<string, string> = {};
		for (const page of pages) {
			const row = LOADS.find((r) => r.route === page.routeId);
			const spec = row?.request?.(fx) ?? {};
			const event = makeEvent(page.routeId, callers['signed-out'], spec);
			const res = await handle({ event, resolve: async () => new Response('page') });
			seen[page.routeId] = res.status === 303 ? (res.headers.get('location') ?? '') : String(res.status);
		}
		for (const page of pages) {
			const expected = PUBLIC_ROUTES.has(page.routeId) ? '200' : expect.stringMatching(/^\/login\?next=/);
			expect({ route: page.routeId, got: seen[page.routeId] }).toEqual({
				route: page.routeId,
				got: expected
			});
		}
	});

	it('every private page also guards itself: its own load sends a signed-out visitor to sign in', () => {
		const unguarded = LOADS.filter((r) => !PUBLIC_ROUTES.has(r.route) && r.expect[0] !== 'login');
		expect(unguarded.map((r) => r.route)).toEqual([]);
	});

	it('names the files it checked', () => {
		// A guard against discovery silently finding nothing (a moved routes folder).
		expect(pages.map((p) => relative(ROUTES_DIR, p.file))).toContain('jobs/[id]/+page.server.ts');
	});
});
