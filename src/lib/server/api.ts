// Helpers that keep routes thin: same-origin and content-type checks for mutating requests,
// size- and depth-limited JSON bodies and query strings validated by zod. They throw
// DomainError; the wrappers in ./handlers.ts turn it into the answer.
import { json, type RequestEvent } from '@sveltejs/kit';
import type { z } from 'zod';
import { DomainError } from './errors';
import { badRequest, validate } from './validate';

export { badRequest, formatIssues, validate } from './validate';

export const DEFAULT_JSON_LIMIT_BYTES = 64 * 1024;
/** Deepest nesting of arrays and objects a JSON body may have; ours need a handful of levels. */
export const MAX_JSON_DEPTH = 32;

/**
 * Mutating API requests must come from our own origin (SvelteKit's CSRF check covers
 * only form posts): 403 otherwise.
 */
export function requireSameOrigin(event: Pick<RequestEvent, 'request' | 'url'>): void {
	const origin = event.request.headers.get('origin');
	if (!origin || origin !== event.url.origin)
		throw new DomainError(
			'forbidden',
			`Cross-origin request refused: send an Origin header equal to ${event.url.origin}`
		);
}

function tooLarge(maxBytes: number): DomainError {
	return new DomainError('too-large', `Body too large: the limit here is ${maxBytes} bytes`);
}

/** Read the raw body with a byte cap: 413 when it is larger, whether declared or chunked. */
export async function readBodyCapped(request: Request, maxBytes: number): Promise<Uint8Array> {
	const declared = Number(request.headers.get('content-length') ?? NaN);
	if (Number.isFinite(declared) && declared > maxBytes) throw tooLarge(maxBytes);
	if (!request.body) return new Uint8Array(0);
	const reader = request.body.getReader();
	const chunks: Uint8Array[] = [];
	let total = 0;
	for (;;) {
		let step: ReadableStreamReadResult<Uint8Array>;
		try {
			step = await reader.read();
		} catch (e) {
			// The server's own body limit ends the stream with a 413 of its own: answer the same.
			if ((e as { status?: number })?.status === 413) throw tooLarge(maxBytes);
			throw e;
		}
		if (step.done) break;
		total += step.value.byteLength;
		if (total > maxBytes) {
			// Stop reading but do not cancel: cancelling destroys the socket, and the client would
			// see a dropped connection instead of this 413. Back-pressure pauses the rest.
			reader.releaseLock();
			throw tooLarge(maxBytes);
		}
		chunks.push(step.value);
	}
	const out = new Uint8Array(total);
	let offset = 0;
	for (const c of chunks) {
		out.set(c, offset);
		offset += c.byteLength;
	}
	return out;
}

/**
 * Deepest array/object nesting in JSON text, found by one linear scan (strings skipped), so a
 * hostile body of thousands of levels is refused before any recursive code walks it.
 */
export function jsonDepth(text: string): number {
	let depth = 0;
	let max = 0;
	let inString = false;
	for (let i = 0; i < text.length; i++) {
		const c = text.charCodeAt(i);
		if (inString) {
			if (c === 92)
				i++; // backslash: skip the escaped character
			else if (c === 34) inString = false;
		} else if (c === 34) inString = true;
		else if (c === 91 || c === 123) {
			if (++depth > max) max = depth;
		} else if (c === 93 || c === 125) depth--;
	}
	return max;
}

/** Parse JSON text with the depth cap; 400 when it is not JSON or nests too deeply. */
export function parseJsonText(text: string, what = 'Body'): unknown {
	const depth = jsonDepth(text);
	if (depth > MAX_JSON_DEPTH)
		badRequest(`${what} nests ${depth} levels deep; at most ${MAX_JSON_DEPTH} are allowed`);
	try {
		return JSON.parse(text);
	} catch {
		badRequest(`${what} is not valid JSON`);
	}
}

/**
 * Parse a mutating JSON request: same Origin (403), JSON content type (415), size (413),
 * syntax and depth (400) and schema (400 with every zod issue).
 */
export async function readJson<S extends z.ZodType>(
	event: Pick<RequestEvent, 'request' | 'url'>,
	schema: S,
	maxBytes = DEFAULT_JSON_LIMIT_BYTES
): Promise<z.infer<S>> {
	requireSameOrigin(event);
	const type = event.request.headers.get('content-type') ?? '';
	if (!/^application\/json\b/i.test(type))
		throw new DomainError('unsupported-type', 'Send the body as application/json');
	const bytes = await readBodyCapped(event.request, maxBytes);
	return validate(schema, parseJsonText(new TextDecoder().decode(bytes)), 'Invalid request body');
}

/** Parse query-string parameters with a zod object schema (400 on failure, NUL bytes included). */
export function readQuery<S extends z.ZodType>(url: URL, schema: S): z.infer<S> {
	const raw = Object.fromEntries(url.searchParams);
	const nul = Object.entries(raw)
		.filter(([, v]) => v.includes('\u0000'))
		.map(([k]) => ({ path: k, message: 'contains a NUL byte; send plain text' }));
	if (nul.length) badRequest('Invalid query string', nul);
	return validate(schema, raw, 'Invalid query string');
}

/** Parse a positive integer route parameter (404 when it is not one: no such resource). */
export function idParam(value: string | undefined, what = 'resource'): number {
	const n = Number(value);
	if (!value || !/^\d+$/.test(value) || !Number.isSafeInteger(n) || n <= 0)
		throw new DomainError('not-found', `No such ${what}`);
	return n;
}

export { json };
export { endpoint } from './handlers';
