// GET /api/bridge-token: bench roles get a verifiable short-lived token and the bridge URL;
// signed-out visitors get 401, and so does a session that has ended since the request began
// (signed out, ended by a role change or deactivation).
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { isHttpError, type RequestEvent } from '@sveltejs/kit';

const SECRET = 'route-test-secret-0123456789-abcdefghijkl';
vi.stubEnv('DATABASE_URL', ':memory:');
vi.stubEnv('BRIDGE_SECRET', SECRET);
vi.stubEnv('BRIDGE_URL', 'ws://127.0.0.1:8787');

type Handler = (event: RequestEvent) => Promise<Response>;
let GET: Handler;
let updateSettings: typeof import('$lib/server/settings').updateSettings;
let db: typeof import('$lib/server/db').db;
let verifyBridgeToken: typeof import('$lib/bridge/token').verifyBridgeToken;
let auth: typeof import('$lib/server/auth');
let users: typeof import('$lib/server/users');
type Who = { user: NonNullable<App.Locals['user']>; session: NonNullable<App.Locals['session']> };
const who = {} as Record<'technician' | 'supervisor' | 'admin', Who>;

beforeAll(async () => {
	// Imported after the environment is set: the server modules read it at load.
	({ GET } = (await import('./+server')) as unknown as { GET: Handler });
	({ updateSettings } = await import('$lib/server/settings'));
	({ db } = await import('$lib/server/db'));
	({ verifyBridgeToken } = await import('$lib/bridge/token'));
	auth = await import('$lib/server/auth');
	users = await import('$lib/server/users');
	for (const role of ['technician', 'supervisor', 'admin'] as const) {
		const u = await users.createUser(db, {
			email: `${role}@example.com`,
			name: `Bench ${role}`,
			role,
			password: 'copper kettle lantern'
		});
		const { session } = await auth.createSession(db, u.id);
		who[role] = { user: { id: u.id, email: u.email, name: u.name, role }, session };
	}
});

function event(caller: Who | null): RequestEvent {
	const url = new URL('http://127.0.0.1:3000/api/bridge-token');
	const locals = { user: caller?.user ?? null, session: caller?.session ?? null };
	return { url, request: new Request(url), locals } as unknown as RequestEvent;
}

async function status(p: Promise<unknown>): Promise<number | 'ok'> {
	try {
		await p;
		return 'ok';
	} catch (e) {
		if (isHttpError(e)) return e.status;
		throw e;
	}
}

describe('GET /api/bridge-token', () => {
	it('refuses a signed-out visitor with 401', async () => {
		expect(await status(GET(event(null)))).toBe(401);
	});

	it.each(['technician', 'supervisor', 'admin'] as const)('mints a token for a %s', async (role) => {
		const res = await GET(event(who[role]));
		expect(res.status).toBe(200);
		expect(res.headers.get('cache-control')).toBe('no-store');
		const body = (await res.json()) as { token: string; expiresAt: string; bridgeUrl: string };
		expect(body.bridgeUrl).toBe('ws://127.0.0.1:8787');
		const claims = await verifyBridgeToken(SECRET, body.token);
		expect(claims).toMatchObject({ userId: who[role].user.id, role });
		const lifeS = (Date.parse(body.expiresAt) - Date.now()) / 1000;
		expect(lifeS).toBeGreaterThan(60);
		expect(lifeS).toBeLessThanOrEqual(300);
	});

	it('answers the shop setting bridgeUrl when one is stored', async () => {
		updateSettings(db, { bridgeUrl: 'ws://127.0.0.1:8899' });
		const res = await GET(event(who.technician));
		expect(((await res.json()) as { bridgeUrl: string }).bridgeUrl).toBe('ws://127.0.0.1:8899');
	});

	it('carries an opaque tag of the session (for renewals), never the session id, and its lifetime', async () => {
		const tagOf = async (caller: Who) => {
			const body = (await (await GET(event(caller))).json()) as { token: string; expiresInS: number };
			expect(body.expiresInS).toBeGreaterThan(60);
			return (await verifyBridgeToken(SECRET, body.token)).sessionTag;
		};
		const { session } = await auth.createSession(db, who.technician.user.id);
		const other = { user: who.technician.user, session };
		const a1 = await tagOf(who.technician);
		expect(a1).toMatch(/^[\w-]{32}$/);
		expect(await tagOf(who.technician)).toBe(a1);
		expect(await tagOf(other)).not.toBe(a1);
		expect(a1).not.toContain(who.technician.session.id.slice(0, 16));
	});

	it('refuses (401) a session that ended after the request was let in', async () => {
		const fresh = async () => {
			const { session } = await auth.createSession(db, who.technician.user.id);
			return { user: who.technician.user, session };
		};
		// Signed out elsewhere meanwhile.
		const out = await fresh();
		await auth.signOut(db, out.session.id);
		const signedOut = await GET(event(out));
		expect(signedOut.status).toBe(401);
		expect(await signedOut.json()).toEqual({ message: 'Your session has ended; sign in again' });
		// The user was deactivated (which ends their sessions).
		const live = await fresh();
		expect((await GET(event(live))).status).toBe(200);
		await users.updateUser(db, who.technician.user.id, { active: false });
		expect((await GET(event(live))).status).toBe(401);
		await users.updateUser(db, who.technician.user.id, { active: true });
		// The role changed (which ends their sessions too).
		const before = await fresh();
		await users.updateUser(db, who.technician.user.id, { role: 'supervisor' });
		expect((await GET(event(before))).status).toBe(401);
		// A user with no session at all.
		expect((await GET(event({ ...who.admin, session: null as never }))).status).toBe(401);
	});
});
