// GET /api/bridge-token: bench roles get a verifiable short-lived token (with an opaque tag of
// their session, for renewals) and the bridge URL; signed-out visitors get 401; and through the
// real session hook, a deactivated user gets 401 (so their open stream cannot be renewed).
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { isHttpError, type Cookies, type RequestEvent } from '@sveltejs/kit';

const SECRET = 'route-test-secret-0123456789-abcdefghijkl';
vi.stubEnv('DATABASE_URL', ':memory:');
vi.stubEnv('BRIDGE_SECRET', SECRET);
vi.stubEnv('BRIDGE_URL', 'ws://127.0.0.1:8787');

type Handler = (event: RequestEvent) => Promise<Response>;
let GET: Handler;
let updateSettings: typeof import('$lib/server/settings').updateSettings;
let db: typeof import('$lib/server/db').db;
let verifyBridgeToken: typeof import('$lib/bridge/token').verifyBridgeToken;
let handle: typeof import('../../../hooks.server').handle;
let auth: typeof import('$lib/server/auth');
let users: typeof import('$lib/server/users');

beforeAll(async () => {
	// Imported after the environment is set: the server modules read it at load.
	({ GET } = (await import('./+server')) as unknown as { GET: Handler });
	({ updateSettings } = await import('$lib/server/settings'));
	({ db } = await import('$lib/server/db'));
	({ verifyBridgeToken } = await import('$lib/bridge/token'));
	({ handle } = await import('../../../hooks.server'));
	auth = await import('$lib/server/auth');
	users = await import('$lib/server/users');
});

const SESSION_A = { id: 'a'.repeat(64), createdAt: new Date(), expiresAt: new Date(Date.now() + 3_600_000) };
const SESSION_B = { ...SESSION_A, id: 'b'.repeat(64) };

function event(user: App.Locals['user'], session: App.Locals['session'] = null): RequestEvent {
	const url = new URL('http://127.0.0.1:3000/api/bridge-token');
	return { url, request: new Request(url), locals: { user, session } } as unknown as RequestEvent;
}

/** The answer's status whether the guard threw an HttpError or the wrapper answered it. */
async function call(
	p: Response | Promise<Response>
): Promise<{ status: number; body: Record<string, unknown> }> {
	try {
		const res = await Promise.resolve(p);
		return { status: res.status, body: (await res.json()) as Record<string, unknown> };
	} catch (e) {
		if (isHttpError(e)) return { status: e.status, body: e.body as unknown as Record<string, unknown> };
		throw e;
	}
}

/** GET through the real hook with a session cookie, as the browser's BridgeLink does. */
async function viaHook(cookie: string): Promise<{ status: number; body: Record<string, unknown> }> {
	const url = new URL('http://127.0.0.1:3000/api/bridge-token');
	const cookies = {
		get: (name: string) => (name === auth.SESSION_COOKIE ? cookie : undefined),
		set: () => {},
		delete: () => {}
	} as unknown as Cookies;
	const ev = {
		url,
		request: new Request(url),
		cookies,
		locals: {} as App.Locals,
		route: { id: '/api/bridge-token' },
		params: {}
	} as unknown as RequestEvent;
	return call(handle({ event: ev, resolve: (e) => GET(e) }));
}

describe('GET /api/bridge-token', () => {
	it('refuses a signed-out visitor with 401', async () => {
		expect((await call(GET(event(null)))).status).toBe(401);
	});

	it.each(['technician', 'supervisor', 'admin'] as const)('mints a token for a %s', async (role) => {
		const res = await GET(
			event({ id: `user-${role}`, email: `${role}@example.com`, name: role, role }, SESSION_A)
		);
		expect(res.status).toBe(200);
		expect(res.headers.get('cache-control')).toBe('no-store');
		const body = (await res.json()) as {
			token: string;
			expiresAt: string;
			expiresInS: number;
			bridgeUrl: string;
		};
		expect(body.bridgeUrl).toBe('ws://127.0.0.1:8787');
		const claims = await verifyBridgeToken(SECRET, body.token);
		expect(claims).toMatchObject({ userId: `user-${role}`, role });
		const lifeS = (Date.parse(body.expiresAt) - Date.now()) / 1000;
		expect(lifeS).toBeGreaterThan(60);
		expect(lifeS).toBeLessThanOrEqual(300);
		expect(body.expiresInS).toBeGreaterThanOrEqual(lifeS - 1);
	});

	it('tags the token with its session: the same tag for the same session, never the session id', async () => {
		const user = { id: 'user-t', email: 't@example.com', name: 'T', role: 'technician' as const };
		const tagOf = async (session: App.Locals['session']) => {
			const body = (await (await GET(event(user, session))).json()) as { token: string };
			return (await verifyBridgeToken(SECRET, body.token)).sessionTag;
		};
		const a1 = await tagOf(SESSION_A);
		expect(a1).toMatch(/^[\w-]{32}$/);
		expect(await tagOf(SESSION_A)).toBe(a1);
		expect(await tagOf(SESSION_B)).not.toBe(a1);
		expect(a1).not.toContain(SESSION_A.id.slice(0, 16));
	});

	it('answers the shop setting bridgeUrl when one is stored', async () => {
		updateSettings(db, { bridgeUrl: 'ws://127.0.0.1:8899' });
		const res = await GET(event({ id: 'u', email: 't@example.com', name: 'T', role: 'technician' }));
		expect(((await res.json()) as { bridgeUrl: string }).bridgeUrl).toBe('ws://127.0.0.1:8899');
	});

	it('through the session hook: a deactivated user gets 401, and a changed role shows in the next token', async () => {
		const password = 'bench-renewal-test-passphrase-7';
		await users.createUser(db, {
			email: 'renew@example.com',
			name: 'Renée Bench',
			role: 'technician',
			password
		});
		await users.createUser(db, { email: 'boss@example.com', name: 'Boss Bench', role: 'admin', password });
		const signIn = async () => {
			const r = await auth.signIn(db, { email: 'renew@example.com', password, ip: '127.0.0.1' });
			if (!r.ok) throw new Error('sign-in failed');
			return r;
		};
		const first = await signIn();
		const ok = await viaHook(first.token);
		expect(ok.status).toBe(200);
		expect(await verifyBridgeToken(SECRET, ok.body.token as string)).toMatchObject({ role: 'technician' });

		// The next renewal carries the role the user has now; the bridge takes it over.
		await users.changeRole(db, first.user.id, 'supervisor');
		const afterRole = await viaHook(first.token);
		if (afterRole.status === 200)
			expect(await verifyBridgeToken(SECRET, afterRole.body.token as string)).toMatchObject({
				role: 'supervisor'
			});
		else expect(afterRole.status).toBe(401); // a role change that ends sessions is stricter still

		const second = await signIn();
		await users.deactivateUser(db, first.user.id);
		expect((await viaHook(second.token)).status).toBe(401);
	});
});
