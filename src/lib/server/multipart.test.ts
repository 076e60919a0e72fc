// The in-place multipart reader against what the platform's own FormData serialiser writes, and
// against hand-written bodies for the RFC 7578 / RFC 2046 details (preamble, quoted boundary).
import { describe, expect, it } from 'vitest';
import { multipartBoundary, parseMultipart } from './multipart';

const text = (b: Uint8Array) => new TextDecoder().decode(b);

describe('multipart', () => {
	it('reads what the platform FormData sends: file part bytes intact, text part, file name', async () => {
		const wav = new Uint8Array(70_000).map((_, i) => (i * 31) & 255);
		// The boundary string inside the content must not end a part early (only CRLF--boundary does).
		const f = new FormData();
		f.set('meta', '{"label":"a\\r\\nb"}');
		f.set('samples', new Blob([wav]), 'cap.wav');
		const req = new Request('http://x/', { method: 'POST', body: f });
		const boundary = multipartBoundary(req.headers.get('content-type') ?? '');
		expect(boundary).not.toBeNull();
		const parts = parseMultipart(new Uint8Array(await req.arrayBuffer()), boundary!);
		expect(parts?.map((p) => [p.name, p.filename])).toEqual([
			['meta', undefined],
			['samples', 'cap.wav']
		]);
		expect(text(parts![0].data)).toBe('{"label":"a\\r\\nb"}');
		expect(parts![1].data).toEqual(wav);
	});

	it('takes a quoted boundary and a preamble; refuses a body without its closing boundary', () => {
		expect(multipartBoundary('multipart/form-data; boundary="a b"')).toBe('a b');
		expect(multipartBoundary('application/json')).toBeNull();
		const body = new TextEncoder().encode(
			'preamble\r\n--a b\r\nContent-Disposition: form-data; name="meta"\r\n\r\nhello\r\n--a b--\r\n'
		);
		const parts = parseMultipart(body, 'a b');
		expect(parts?.map((p) => [p.name, text(p.data)])).toEqual([['meta', 'hello']]);
		expect(parseMultipart(body.subarray(0, body.length - 12), 'a b')).toBeNull();
		expect(parseMultipart(new TextEncoder().encode('no parts here'), 'a b')).toBeNull();
	});
});
