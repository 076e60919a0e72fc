// GET /api/bridge-token: bench roles get a verifiable short-lived token and the bridge URL;
// signed-out visitors get 401.
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

beforeAll(async () => {
	// Imported after the environment is set: the server modules read it at load.
	({ GET } = (await import('./+server')) as unknown as { GET: Handler });
	({ updateSettings } = await import('$lib/server/settings'));
	({ db } = await import('$lib/server/db'));
	({ verifyBridgeToken } = await import('$lib/bridge/token'));
});

function event(user: App.Locals['user']): RequestEvent {
	const url = new URL('http://127.0.0.1:3000/api/bridge-token');
	return { url, request: new Request(url), locals: { user, session: null } } as unknown as RequestEvent;
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
		const res = await GET(event({ id: `user-${role}`, email: `${role}@example.com`, name: role, role }));
		expect(res.status).toBe(200);
		expect(res.headers.get('cache-control')).toBe('no-store');
		const body = (await res.json()) as { token: string; expiresAt: string; bridgeUrl: string };
		expect(body.bridgeUrl).toBe('ws://127.0.0.1:8787');
		const claims = await verifyBridgeToken(SECRET, body.token);
		expect(claims).toMatchObject({ userId: `user-${role}`, role });
		const lifeS = (Date.parse(body.expiresAt) - Date.now()) / 1000;
		expect(lifeS).toBeGreaterThan(60);
		expect(lifeS).toBeLessThanOrEqual(300);
	});

	it('answers the shop setting bridgeUrl when one is stored', async () => {
		updateSettings(db, { bridgeUrl: 'ws://127.0.0.1:8899' });
		const res = await GET(event({ id: 'u', email: 't@example.com', name: 'T', role: 'technician' }));
		expect(((await res.json()) as { bridgeUrl: string }).bridgeUrl).toBe('ws://127.0.0.1:8899');
	});
});
