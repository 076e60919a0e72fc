// Calls an API route handler the way SvelteKit would in the unit suites: a real Request with the
// same-origin header for mutating methods, and thrown HttpErrors answered as the server answers them.
export const TEST_ORIGIN = 'http://bench.test';

export interface RouteUser {
	id: string;
	email: string;
	name: string;
	role: 'technician' | 'supervisor' | 'admin';
}

export interface RouteCall {
	method?: string;
	path: string;
	params: Record<string, string>;
	user: RouteUser | null;
	/** A JSON body (sent as application/json). */
	json?: unknown;
	/** A raw body; FormData keeps the multipart boundary Request chooses. */
	body?: BodyInit;
	contentType?: string;
	/** The Origin header for mutating methods; null sends none. */
	origin?: string | null;
}

export async function callRoute(
	handler: (event: never) => Response | Promise<Response>,
	opts: RouteCall
): Promise<{ status: number; body: Record<string, unknown>; res?: Response }> {
	const url = new URL(opts.path, TEST_ORIGIN);
	const method = opts.method ?? 'GET';
	const headers = new Headers();
	if (method !== 'GET' && opts.origin !== null) headers.set('origin', opts.origin ?? TEST_ORIGIN);
	let body = opts.body;
	if (opts.json !== undefined) {
		headers.set('content-type', 'application/json');
		body = JSON.stringify(opts.json);
	} else if (opts.contentType && !(body instanceof FormData)) headers.set('content-type', opts.contentType);
	const request = new Request(url, { method, headers, body });
	const event = {
		request,
		url,
		params: opts.params,
		locals: { user: opts.user, session: null },
		getClientAddress: () => '127.0.0.1'
	};
	try {
		const res = await handler(event as never);
		const isJson = (res.headers.get('content-type') ?? '').includes('json');
		return { status: res.status, body: isJson ? ((await res.json()) as Record<string, unknown>) : {}, res };
	} catch (e) {
		const err = e as { status?: number; body?: Record<string, unknown> };
		if (typeof err.status === 'number' && err.body) return { status: err.status, body: err.body };
		throw e;
	}
}
