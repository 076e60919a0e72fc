// The route helpers every API call goes through: body caps (declared and chunked), JSON depth,
// NUL bytes in query strings, and the one error answer made by endpoint().
import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { jsonDepth, MAX_JSON_DEPTH, readBodyCapped, readJson, readQuery } from './api';
import { DomainError } from './errors';
import { endpoint } from './handlers';

function chunkedRequest(totalBytes: number, chunkBytes = 16 * 1024): Request {
	let sent = 0;
	const body = new ReadableStream<Uint8Array>({
		pull(controller) {
			if (sent >= totalBytes) return controller.close();
			const n = Math.min(chunkBytes, totalBytes - sent);
			sent += n;
			controller.enqueue(new Uint8Array(n).fill(0x61));
		}
	});
	// No Content-Length: the size is only known by reading, as with Transfer-Encoding: chunked.
	return new Request('http://127.0.0.1/api/x', { method: 'POST', body, duplex: 'half' } as RequestInit);
}

async function failure(p: Promise<unknown> | (() => unknown)): Promise<DomainError> {
	try {
		await (typeof p === 'function' ? p() : p);
	} catch (e) {
		if (e instanceof DomainError) return e;
		throw e;
	}
	throw new Error('expected a DomainError');
}

describe('readBodyCapped', () => {
	it('refuses a chunked body over the cap with 413 once the cap is passed, not a dropped connection', async () => {
		const e = await failure(readBodyCapped(chunkedRequest(200_000), 64 * 1024));
		expect(e.status).toBe(413);
		expect(e.message).toMatch(/65536 bytes/);
	});

	it('refuses a declared Content-Length over the cap without reading', async () => {
		const req = new Request('http://127.0.0.1/api/x', {
			method: 'POST',
			body: 'x',
			headers: { 'content-length': '999999' }
		});
		expect((await failure(readBodyCapped(req, 1024))).status).toBe(413);
	});

	it('reads a chunked body under the cap whole', async () => {
		expect((await readBodyCapped(chunkedRequest(50_000, 7000), 64 * 1024)).byteLength).toBe(50_000);
	});
});

describe('JSON depth', () => {
	it('counts nesting, ignoring brackets inside strings', () => {
		expect(jsonDepth('{"a":[1,{"b":"[[[{{{"}]}')).toBe(3);
		expect(jsonDepth('"\\"[["')).toBe(0);
	});

	it('refuses 5,000 levels with a 400 that says the limit, without a stack overflow', async () => {
		const deep = '['.repeat(5000) + ']'.repeat(5000);
		const request = new Request('http://127.0.0.1/api/x', {
			method: 'POST',
			body: deep,
			headers: { 'content-type': 'application/json', origin: 'http://127.0.0.1' }
		});
		const e = await failure(readJson({ request, url: new URL(request.url) }, z.unknown()));
		expect(e.status).toBe(400);
		expect(e.message).toBe(`Body nests 5000 levels deep; at most ${MAX_JSON_DEPTH} are allowed`);
	});
});

describe('readQuery', () => {
	it('refuses a NUL byte with a 400 naming the parameter', async () => {
		const e = await failure(() =>
			readQuery(new URL('http://x/api/jobs?q=a%00b'), z.object({ q: z.string() }))
		);
		expect(e.status).toBe(400);
		expect(e.issues).toEqual([{ path: 'q', message: 'contains a NUL byte; send plain text' }]);
	});

	it('reports every problem at once, and an enum lists its allowed values', async () => {
		const schema = z.object({ sort: z.enum(['newest', 'oldest']), page: z.coerce.number().int().min(1) });
		const e = await failure(() => readQuery(new URL('http://x/?sort=up&page=0'), schema));
		expect(e.issues?.map((i) => i.path)).toEqual(['sort', 'page']);
		expect(e.issues?.[0].message).toMatch(/newest/);
		expect(e.issues?.[0].message).toMatch(/oldest/);
	});
});

describe('endpoint()', () => {
	it('answers a DomainError with its status, JSON body and headers', async () => {
		const handler = endpoint(() => {
			throw new DomainError('busy', 'Analysis queue is full; try again shortly', undefined, {
				'retry-after': '5'
			});
		});
		const res = await handler({} as never);
		expect(res.status).toBe(503);
		expect(res.headers.get('retry-after')).toBe('5');
		expect(await res.json()).toEqual({ message: 'Analysis queue is full; try again shortly' });
	});

	it('lets any other error through to SvelteKit (a logged 500)', async () => {
		const handler = endpoint(() => {
			throw new TypeError('bug');
		});
		await expect(handler({} as never)).rejects.toThrow(TypeError);
	});
});
