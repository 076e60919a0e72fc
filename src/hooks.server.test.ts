// The server hook: session cookie → locals (with sliding refresh and clean-up of a dead
// cookie), security headers, and JSON error answers under /api/.
import { afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import type { Cookies, RequestEvent, ResolveOptions } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { SESSION_COOKIE, signIn } from '$lib/server/auth';
import { env } from '$lib/server/env';
import { handle } from './hooks.server';
import { seedDemo, DEMO_PASSWORD } from '../scripts/seed';

interface CookieCall {
	op: 'set' | 'delete';
	name: string;
	value?: string;
	opts: Record<string, unknown>;
}

function makeEvent(
	path: string,
	cookie?: string,
	headers: Record<string, string> = {},
	routeId: string | null = null,
	method = 'GET'
) {
	const calls: CookieCall[] = [];
	const url = new URL(path, 'http://127.0.0.1:5173');
	const cookies = {
		get: (name: string) => (name === SESSION_COOKIE ? cookie : undefined),
		set: (name: string, value: string, opts: Record<string, unknown>) =>
			calls.push({ op: 'set', name, value, opts }),
		delete: (name: string, opts: Record<string, unknown>) => calls.push({ op: 'delete', name, opts })
	} as unknown as Cookies;
	const event = {
		url,
		request: new Request(url, { headers, method }),
		cookies,
		locals: {} as App.Locals,
		route: { id: routeId },
		params: {}
	} as unknown as RequestEvent;
	return { event, calls };
}

async function run(event: RequestEvent, response: Response | ((e: RequestEvent) => Response)) {
	let seen: App.Locals | undefined;
	const resolve = async (e: RequestEvent, _opts?: ResolveOptions) => {
		seen = { ...e.locals };
		return typeof response === 'function' ? response(e) : response;
	};
	const res = await handle({ event, resolve });
	return { res, locals: seen! };
}

let token: string;
beforeAll(async () => {
	await seedDemo(db);
	const r = await signIn(db, { email: 'tech1@example.com', password: DEMO_PASSWORD, ip: '127.0.0.1' });
	if (!r.ok) throw new Error('demo sign-in failed');
	token = r.token;
});
afterEach(() => {
	vi.useRealTimers();
});

describe('hooks: session', () => {
	it('fills locals.user and locals.session from a valid cookie', async () => {
		const { event, calls } = makeEvent('/jobs', token);
		const { locals } = await run(event, new Response('ok'));
		expect(locals.user).toMatchObject({
			email: 'tech1@example.com',
			role: 'technician',
			name: 'Tamsin Oakridge'
		});
		expect(locals.session?.id).toMatch(/^[0-9a-f]{64}$/);
		expect(calls).toEqual([]);
	});

	it('leaves locals empty without a cookie, and clears a dead cookie', async () => {
		const none = makeEvent('/jobs');
		expect((await run(none.event, new Response('ok'))).locals).toEqual({ user: null, session: null });
		const dead = makeEvent('/jobs', 'a'.repeat(32));
		expect((await run(dead.event, new Response('ok'))).locals.user).toBeNull();
		expect(dead.calls).toEqual([
			{ op: 'delete', name: SESSION_COOKIE, opts: expect.objectContaining({ path: '/', secure: false }) }
		]);
	});

	it('sends the cookie again when the idle expiry slides forward', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(Date.now() + env.SESSION_IDLE_MINUTES * 0.6 * 60_000);
		const { event, calls } = makeEvent('/jobs', token);
		await run(event, new Response('ok'));
		expect(calls).toHaveLength(1);
		expect(calls[0]).toMatchObject({
			op: 'set',
			name: SESSION_COOKIE,
			value: token,
			opts: { httpOnly: true, sameSite: 'lax', secure: false, path: '/' }
		});
		const expires = calls[0].opts.expires as Date;
		expect(expires.getTime()).toBe(Date.now() + env.SESSION_IDLE_MINUTES * 60_000);
	});
});

describe('hooks: headers and API errors', () => {
	it('sets the security headers on every answer', async () => {
		const { event } = makeEvent('/');
		const { res } = await run(event, new Response('<p>hi</p>', { headers: { 'content-type': 'text/html' } }));
		expect(res.headers.get('x-content-type-options')).toBe('nosniff');
		expect(res.headers.get('referrer-policy')).toBe('strict-origin-when-cross-origin');
		expect(res.headers.get('x-frame-options')).toBe('DENY');
	});

	it('turns an HTML error page under /api/ into JSON, uncached', async () => {
		const { event } = makeEvent('/api/nothing-here');
		const { res } = await run(
			event,
			new Response('<h1>Not found</h1>', { status: 404, headers: { 'content-type': 'text/html' } })
		);
		expect(res.status).toBe(404);
		expect(res.headers.get('content-type')).toMatch(/application\/json/);
		expect(await res.json()).toMatchObject({ message: expect.any(String) });
		expect(res.headers.get('cache-control')).toBe('no-store');
	});

	it('asks SvelteKit for JSON errors on API requests that sent no Accept header', async () => {
		const { event } = makeEvent('/api/jobs');
		let accept: string | null = null;
		await run(event, (e) => {
			accept = e.request.headers.get('accept');
			return new Response('{}', { headers: { 'content-type': 'application/json' } });
		});
		expect(accept).toBe('application/json');
	});

	it('copes with a passed-through response whose headers are immutable', async () => {
		const { event } = makeEvent('/');
		const frozen = Response.redirect('http://127.0.0.1:5173/login', 303);
		const { res } = await run(event, frozen);
		expect(res.status).toBe(303);
		expect(res.headers.get('x-content-type-options')).toBe('nosniff');
	});
});

describe('hooks: private by default', () => {
	const resolved = () => new Response('resolved');

	it('sends a signed-out visitor of a private page to sign in, keeping where they were going', async () => {
		const { event } = makeEvent('/jobs/3/bench?x=1', undefined, {}, '/jobs/[id]/bench');
		const { res } = await run(event, resolved);
		expect(res.status).toBe(303);
		expect(res.headers.get('location')).toBe(`/login?next=${encodeURIComponent('/jobs/3/bench?x=1')}`);
		expect(res.headers.get('x-frame-options')).toBe('DENY');
	});

	it('answers a signed-out API call with a 401 in JSON before the route runs', async () => {
		const { event } = makeEvent('/api/jobs', undefined, {}, '/api/jobs');
		let ran = false;
		const { res } = await run(event, () => {
			ran = true;
			return resolved();
		});
		expect(ran).toBe(false);
		expect(res.status).toBe(401);
		expect(await res.json()).toEqual({ message: 'Sign in first' });
	});

	it('lets anyone reach the public pages, and a signed-in user reach the rest', async () => {
		for (const id of ['/login', '/safety', '/']) {
			const { event } = makeEvent(id, undefined, {}, id);
			expect((await run(event, resolved)).res.status, id).toBe(200);
		}
		const { event } = makeEvent('/jobs', token, {}, '/jobs');
		expect((await run(event, resolved)).res.status).toBe(200);
	});
});

describe('hooks: 405 names the allowed methods', () => {
	it('rewrites SvelteKit’s 405 as JSON that lists the Allow header', async () => {
		const { event } = makeEvent('/api/jobs', token, {}, '/api/jobs', 'DELETE');
		const { res } = await run(
			event,
			new Response('DELETE method not allowed', { status: 405, headers: { allow: 'GET, POST' } })
		);
		expect(res.status).toBe(405);
		expect(res.headers.get('allow')).toBe('GET, POST');
		expect(await res.json()).toEqual({
			message: 'DELETE is not allowed on /api/jobs; allowed: GET, POST',
			allowed: ['GET', 'POST']
		});
	});
});
