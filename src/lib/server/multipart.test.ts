// The in-place multipart reader against what the platform's own FormData serialiser writes, and
// against hand-written bodies for the RFC 7578 / RFC 2046 details (preamble, quoted boundary).
import { describe, expect, it } from 'vitest';
import { MultipartError, multipartBoundary, parseMultipart, streamMultipart } from './multipart';

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

describe('streamMultipart', () => {
	async function collect(body: Uint8Array, boundary: string, chunk: number) {
		const parts: { name: string; filename?: string; data: Buffer }[] = [];
		async function* chunks() {
			for (let i = 0; i < body.length; i += chunk) yield body.subarray(i, i + chunk);
		}
		await streamMultipart(chunks(), boundary, (head) => {
			const got: Buffer[] = [];
			return {
				write: (c) => void got.push(Buffer.from(c)),
				end: () => void parts.push({ ...head, data: Buffer.concat(got) })
			};
		});
		return parts;
	}

	it('reads what the platform FormData sends, whatever the chunk size, parts intact', async () => {
		// Content that holds CRLF, dashes and the boundary's own text without a leading CRLF--.
		const wav = new Uint8Array(70_000).map((_, i) => (i * 31) & 255);
		const f = new FormData();
		f.append('file', new Blob([wav]), 'a.wav');
		f.append('file', new Blob(['line\r\n--not-a-boundary\r\n-']), 'b.txt');
		const req = new Request('http://x/', { method: 'POST', body: f });
		const boundary = multipartBoundary(req.headers.get('content-type') ?? '')!;
		const body = new Uint8Array(await req.arrayBuffer());
		for (const chunk of [1, 7, 70, 4096, body.length]) {
			const parts = await collect(body, boundary, chunk);
			expect(
				parts.map((p) => [p.name, p.filename]),
				`chunk ${chunk}`
			).toEqual([
				['file', 'a.wav'],
				['file', 'b.txt']
			]);
			expect(parts[0].data.equals(Buffer.from(wav)), `chunk ${chunk}`).toBe(true);
			expect(parts[1].data.toString(), `chunk ${chunk}`).toBe('line\r\n--not-a-boundary\r\n-');
		}
	});

	it('refuses a body that ends before its closing boundary', async () => {
		const body = new TextEncoder().encode(
			'--b\r\nContent-Disposition: form-data; name="file"; filename="x"\r\n\r\nabc'
		);
		await expect(collect(body, 'b', 5)).rejects.toBeInstanceOf(MultipartError);
	});
});
