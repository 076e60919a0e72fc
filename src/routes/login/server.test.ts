// The sign-in action through its real handler: a sign-in from a browser that is already signed
// in ends the old session on the server; a wait is a 429 with Retry-After and says how long;
// with TRUSTED_PROXY off a client cannot pick its own address through X-Forwarded-For, and with
// it on each client behind the proxy is counted on its own.
import { afterEach, describe, expect, it, vi } from 'vitest';
import { isRedirect, type Cookies, type RequestEvent } from '@sveltejs/kit';

const PASSWORD = 'copper kettle lantern';
const EMAIL = 'pat@example.com';

interface Loaded {
	action: (event: RequestEvent) => Promise<unknown>;
	db: typeof import('$lib/server/db').db;
	auth: typeof import('$lib/server/auth');
}

/** The login module and a fresh in-memory database, loaded under the given TRUSTED_PROXY. */
async function load(trustedProxy: string | undefined): Promise<Loaded> {
	vi.resetModules();
	vi.stubEnv('DATABASE_URL', ':memory:');
	vi.stubEnv('TRUSTED_PROXY', trustedProxy);
	const { db } = await import('$lib/server/db');
	const auth = await import('$lib/server/auth');
	const { createUser } = await import('$lib/server/users');
	await createUser(db, { email: EMAIL, name: 'Pat Benchley', role: 'technician', password: PASSWORD });
	const mod = (await import('./+page.server')) as unknown as {
		actions: { default: (event: RequestEvent) => Promise<unknown> };
	};
	return { action: mod.actions.default, db, auth };
}

interface Call {
	password?: string;
	socket?: string;
	xff?: string;
	locals?: App.Locals;
}

async function post(l: Loaded, call: Call = {}) {
	const url = new URL('http://127.0.0.1:3000/login');
	const form = new FormData();
	form.set('email', EMAIL);
	form.set('password', call.password ?? PASSWORD);
	form.set('next', '/jobs');
	const headers: Record<string, string> = { origin: url.origin };
	if (call.xff) headers['x-forwarded-for'] = call.xff;
	const jar = new Map<string, string>();
	const setHeaders: Record<string, string> = {};
	const event = {
		request: new Request(url, { method: 'POST', body: form, headers }),
		url,
		params: {},
		route: { id: '/login' },
		locals: call.locals ?? { user: null, session: null },
		cookies: {
			get: (n: string) => jar.get(n),
			set: (n: string, v: string) => void jar.set(n, v),
			delete: (n: string) => void jar.delete(n)
		} as unknown as Cookies,
		getClientAddress: () => call.socket ?? '10.0.0.2',
		setHeaders: (h: Record<string, string>) => Object.assign(setHeaders, h)
	} as unknown as RequestEvent;
	try {
		const out = (await l.action(event)) as { status?: number; data?: { message?: string } } | undefined;
		return { status: out?.status ?? 200, message: out?.data?.message, headers: setHeaders, jar };
	} catch (e) {
		if (isRedirect(e)) return { status: e.status, location: e.location, headers: setHeaders, jar };
		throw e;
	}
}

afterEach(() => {
	vi.unstubAllEnvs();
});

describe('sign-in action', () => {
	it('ends the browser’s previous session when it signs in again', async () => {
		const l = await load(undefined);
		const first = await post(l);
		expect(first).toMatchObject({ status: 303, location: '/jobs' });
		const oldToken = [...first.jar.values()][0];
		const old = await l.auth.validateSessionToken(l.db, oldToken);
		expect(old).not.toBeNull();

		// The same browser posts the form again while signed in (a second tab, a stale page).
		const second = await post(l, { locals: { user: old!.user, session: old!.session } });
		expect(second).toMatchObject({ status: 303, location: '/jobs' });
		expect(await l.auth.validateSessionToken(l.db, oldToken)).toBeNull();
		const newToken = [...second.jar.values()][0];
		expect(await l.auth.validateSessionToken(l.db, newToken)).not.toBeNull();
		expect(
			l.db
				.select()
				.from((await import('$lib/server/db')).table.sessions)
				.all()
		).toHaveLength(1);
	});

	it('answers a wait with 429, Retry-After and how long, never naming the account', async () => {
		const l = await load(undefined);
		for (let i = 0; i < 4; i++) expect((await post(l, { password: `wrong ${i}` })).status).toBe(400);
		const limited = await post(l);
		expect(limited.status).toBe(429);
		expect(limited.headers['retry-after']).toBe('2');
		expect(limited.message).toBe('Too many failed sign-ins. Wait 2 seconds and try again.');
	});

	it('with TRUSTED_PROXY off, ignores X-Forwarded-For: rotating it does not escape the wait', async () => {
		const l = await load(undefined);
		for (let i = 0; i < 4; i++)
			expect((await post(l, { password: `wrong ${i}`, xff: `203.0.113.${i}` })).status).toBe(400);
		expect((await post(l, { xff: '198.51.100.77' })).status).toBe(429);
		// Another connection is another client.
		expect((await post(l, { socket: '10.0.0.3' })).status).toBe(303);
	});

	it('with TRUSTED_PROXY=1, counts each client behind the proxy by its own address', async () => {
		const l = await load('1');
		// Everyone arrives from the proxy's socket; the proxy appends the client it saw.
		const proxy = '127.0.0.1';
		for (let i = 0; i < 4; i++)
			expect(
				(await post(l, { password: `wrong ${i}`, socket: proxy, xff: `6.6.6.${i}, 203.0.113.9` })).status
			).toBe(400);
		// The attacker is made to wait, whatever it puts in front of the header…
		expect((await post(l, { socket: proxy, xff: '198.51.100.1, 203.0.113.9' })).status).toBe(429);
		// …while the owner, behind the same proxy, signs in.
		expect((await post(l, { socket: proxy, xff: '192.0.2.44' })).status).toBe(303);
	});
});
