// Helpers that keep API routes thin: same-origin and content-type checks for mutating
// requests, size-limited JSON bodies validated by zod, and uniform error answers.
import { error, json, type RequestEvent } from '@sveltejs/kit';
import { z } from 'zod';

export const DEFAULT_JSON_LIMIT_BYTES = 64 * 1024;

/**
 * Mutating API requests must come from our own origin (SvelteKit's CSRF check covers
 * only form posts): 403 otherwise.
 */
export function requireSameOrigin(event: Pick<RequestEvent, 'request' | 'url'>): void {
	const origin = event.request.headers.get('origin');
	if (!origin || origin !== event.url.origin)
		error(403, 'Cross-origin request refused: Origin must be this site');
}

/** Read the raw body with a byte cap: 413 when it is larger. */
export async function readBodyCapped(request: Request, maxBytes: number): Promise<Uint8Array> {
	const declared = Number(request.headers.get('content-length') ?? NaN);
	if (Number.isFinite(declared) && declared > maxBytes)
		error(413, `Body too large: limit is ${maxBytes} bytes`);
	if (!request.body) return new Uint8Array(0);
	const reader = request.body.getReader();
	const chunks: Uint8Array[] = [];
	let total = 0;
	for (;;) {
		const { done, value } = await reader.read();
		if (done) break;
		total += value.byteLength;
		if (total > maxBytes) {
			await reader.cancel();
			error(413, `Body too large: limit is ${maxBytes} bytes`);
		}
		chunks.push(value);
	}
	const out = new Uint8Array(total);
	let offset = 0;
	for (const c of chunks) {
		out.set(c, offset);
		offset += c.byteLength;
	}
	return out;
}

/** Zod issues in a compact, stable form for 400 answers. */
export function formatIssues(err: z.ZodError): { path: string; message: string }[] {
	return err.issues.map((i) => ({ path: i.path.join('.'), message: i.message }));
}

/** A 400 answer naming what is wrong. */
export function badRequest(message: string, issues?: unknown): never {
	error(400, { message, issues });
}

/**
 * Parse a mutating JSON request: same Origin (403), JSON content type (415), size (413),
 * syntax and schema (400 with the zod issues).
 */
export async function readJson<S extends z.ZodType>(
	event: Pick<RequestEvent, 'request' | 'url'>,
	schema: S,
	maxBytes = DEFAULT_JSON_LIMIT_BYTES
): Promise<z.infer<S>> {
	requireSameOrigin(event);
	const type = event.request.headers.get('content-type') ?? '';
	if (!/^application\/json\b/i.test(type)) error(415, 'Send the body as application/json');
	const bytes = await readBodyCapped(event.request, maxBytes);
	let raw: unknown;
	try {
		raw = JSON.parse(new TextDecoder().decode(bytes));
	} catch {
		badRequest('Body is not valid JSON');
	}
	const parsed = schema.safeParse(raw);
	if (!parsed.success) badRequest('Invalid request body', formatIssues(parsed.error));
	return parsed.data;
}

/** Parse query-string parameters with a zod object schema (400 on failure). */
export function readQuery<S extends z.ZodType>(url: URL, schema: S): z.infer<S> {
	const parsed = schema.safeParse(Object.fromEntries(url.searchParams));
	if (!parsed.success) badRequest('Invalid query string', formatIssues(parsed.error));
	return parsed.data;
}

/** Parse a positive integer route parameter (404 when it is not one: no such resource). */
export function idParam(value: string | undefined, what = 'resource'): number {
	const n = Number(value);
	if (!value || !/^\d+$/.test(value) || !Number.isSafeInteger(n) || n <= 0) error(404, `No such ${what}`);
	return n;
}

export { json };
