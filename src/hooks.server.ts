// Every request: find the signed-in user from the session cookie (sliding its expiry), refuse
// any route that is not public to a signed-out visitor (each route still guards itself), add
// security headers, and make sure /api/ answers errors as JSON, never HTML pages.
import { json, type Handle, type HandleServerError, type RequestEvent } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import {
	SESSION_COOKIE,
	cookieSecureFor,
	deleteSessionCookie,
	purgeExpiredSessions,
	setSessionCookie,
	validateSessionToken
} from '$lib/server/auth';

const PURGE_EVERY_MS = 60 * 60 * 1000;
let lastPurgeMs = 0;

/** Fill locals from the session cookie; send it again when lucia slid its expiry. */
async function authenticate(event: RequestEvent): Promise<void> {
	event.locals.user = null;
	event.locals.session = null;

	const nowMs = Date.now();
	if (nowMs - lastPurgeMs > PURGE_EVERY_MS) {
		lastPurgeMs = nowMs;
		purgeExpiredSessions(db);
	}

	const token = event.cookies.get(SESSION_COOKIE);
	if (token) {
		const secure = cookieSecureFor(event.url);
		const validated = await validateSessionToken(db, token);
		if (validated) {
			event.locals.user = validated.user;
			event.locals.session = validated.session;
			if (validated.fresh) setSessionCookie(event.cookies, token, validated.session.expiresAt, secure);
		} else {
			deleteSessionCookie(event.cookies, secure);
		}
	}
}

const isApi = (url: URL) => url.pathname === '/api' || url.pathname.startsWith('/api/');

/**
 * Routes (by SvelteKit route id) a signed-out visitor may reach. Everything else needs a session
 * before its own guard even runs, so a new page is private unless it is added here.
 */
export const PUBLIC_ROUTES: ReadonlySet<string> = new Set([
	'/',
	'/login',
	'/logout',
	'/safety',
	// The customer's private report link: its token is the key (see $lib/server/customer-links).
	'/r/[token]',
	'/r/[token]/report.pdf',
	// The customer's estimate link (approve, decline, pay), keyed by its token the same way.
	'/e/[token]',
	// The payment service's events: the signature is the key (see $lib/server/payments).
	'/api/payments/webhook'
]);

/** The signed-out refusal for a private route: 401 JSON for the API, the sign-in page otherwise. */
function refuseSignedOut(event: RequestEvent): Response {
	if (isApi(event.url)) return json({ message: 'Sign in first' }, { status: 401 });
	const next = event.url.pathname + event.url.search;
	return new Response(null, {
		status: 303,
		headers: { location: `/login?next=${encodeURIComponent(next)}` }
	});
}

/** SvelteKit answers an unexported method with 405 and an Allow header; say it in words too. */
function methodNotAllowed(event: RequestEvent, response: Response): Response {
	const allow = response.headers.get('allow') ?? '';
	const methods = allow
		.split(',')
		.map((m) => m.trim())
		.filter(Boolean);
	return json(
		{
			message: `${event.request.method} is not allowed on ${event.url.pathname}; allowed: ${methods.join(', ') || 'none'}`,
			allowed: methods
		},
		{ status: 405, headers: allow ? { allow } : {} }
	);
}

// One handle rather than `sequence(...)`: the same code runs in unit tests without
// SvelteKit's request store.
export const handle: Handle = async ({ event, resolve }) => {
	await authenticate(event);

	const routeId = event.route?.id ?? null;
	const refused = !event.locals.user && routeId !== null && !PUBLIC_ROUTES.has(routeId);

	if (isApi(event.url)) {
		// SvelteKit renders an error as JSON only when the client prefers JSON; API callers
		// (curl, scripts) often send no Accept at all, so say it for them.
		try {
			event.request.headers.set('accept', 'application/json');
		} catch {
			// Immutable headers on some platforms: the fallback below still answers JSON.
		}
	}

	let response = refused ? refuseSignedOut(event) : await resolve(event);

	if (isApi(event.url)) {
		const type = response.headers.get('content-type') ?? '';
		if (response.status === 405) response = methodNotAllowed(event, response);
		else if (response.status >= 400 && !type.includes('application/json')) {
			response = json({ message: response.statusText || 'Request failed' }, { status: response.status });
		}
		// Answers depend on who is signed in: no shared caches.
		if (!response.headers.has('cache-control'))
			response = withHeaders(response, { 'cache-control': 'no-store' });
	}

	// CSP itself (with frame-ancestors 'none') comes from kit.csp in svelte.config.js.
	return withHeaders(response, {
		'x-content-type-options': 'nosniff',
		// A page may be stricter (the customer's private link sends no referrer at all).
		'referrer-policy': response.headers.get('referrer-policy') ?? 'strict-origin-when-cross-origin',
		'x-frame-options': 'DENY',
		'cross-origin-opener-policy': 'same-origin',
		'permissions-policy': 'geolocation=(), payment=(), usb=()'
	});
};

/** A Response passed through from fetch has immutable headers: copy it before setting. */
function withHeaders(response: Response, values: Record<string, string>): Response {
	try {
		for (const [k, v] of Object.entries(values)) response.headers.set(k, v);
		return response;
	} catch {
		const copy = new Response(response.body, response);
		for (const [k, v] of Object.entries(values)) copy.headers.set(k, v);
		return copy;
	}
}

/** Unexpected errors: log the detail on the server, show the browser nothing internal. */
export const handleError: HandleServerError = ({ error, event, status, message }) => {
	if (status >= 500) console.error(`[${event.request.method} ${event.url.pathname}]`, error);
	return { message: status >= 500 ? 'Something went wrong on the server; it has been logged.' : message };
};
