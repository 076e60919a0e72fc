// Typing uploads by content: real files of each accepted kind pass; a renamed text file, a PNG
// named .wav and a truncated JPEG do not. Names are never given to the sniffer, so "renamed" is
// modelled by the bytes alone.
import { describe, expect, it } from 'vitest';
import { claimedOtherType, sniffBytes } from './file-sniff';
import { pdf, photo, wav16 } from './file-fixtures';

describe('sniffBytes', () => {
	it('accepts real JPEG, PNG, WebP, PDF and WAV files', async () => {
		expect(await sniffBytes(await photo('jpeg'))).toEqual({ ok: true, type: 'jpeg' });
		expect(await sniffBytes(await photo('png'))).toEqual({ ok: true, type: 'png' });
		expect(await sniffBytes(await photo('webp'))).toEqual({ ok: true, type: 'webp' });
		expect(await sniffBytes(pdf())).toEqual({ ok: true, type: 'pdf' });
		expect(await sniffBytes(wav16(0.2))).toEqual({ ok: true, type: 'wav' });
	});

	it('refuses a text file whatever it is called', async () => {
		const text = Buffer.from('Service notes: replaced C801, C802.\n'.repeat(20));
		expect(await sniffBytes(text)).toEqual({ ok: false, reason: 'unsupported', detected: null });
	});

	it('refuses a PNG named .wav: the content is PNG and the name claims another accepted type', async () => {
		// The bytes decide: an upload named capture.wav holding a PNG is a PNG (PNG signature, ISO/IEC 15948 5.2).
		const png = await photo('png');
		expect([...png.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
		const r = await sniffBytes(png);
		expect(r).toEqual({ ok: true, type: 'png' });
		expect(r.ok && r.type).not.toBe('wav');
		expect(claimedOtherType('capture.wav', 'png')).toBe('wav');
		expect(claimedOtherType('capture.png', 'png')).toBeNull();
		expect(claimedOtherType('IMG_0001.JPG', 'jpeg')).toBeNull();
		// A name with no accepted extension claims nothing: the content decides.
		expect(claimedOtherType('scan', 'pdf')).toBeNull();
	});

	it('refuses a truncated JPEG (no EOI marker, ITU-T T.81 B.2.1)', async () => {
		const jpeg = await photo('jpeg', 200, 150);
		const cut = jpeg.subarray(0, Math.floor(jpeg.length * 0.6));
		expect(await sniffBytes(cut)).toEqual({ ok: false, reason: 'truncated', type: 'jpeg' });
	});

	it('refuses a cut-off WAV and PNG, and a file type outside the list', async () => {
		const w = wav16(0.2);
		expect(await sniffBytes(w.subarray(0, w.length - 100))).toEqual({
			ok: false,
			reason: 'truncated',
			type: 'wav'
		});
		const p = await photo('png');
		expect(await sniffBytes(p.subarray(0, p.length - 4))).toEqual({
			ok: false,
			reason: 'truncated',
			type: 'png'
		});
		// GIF89a signature (GIF spec, 1989): recognised by file-type, not accepted here.
		const gif = Buffer.from('474946383961010001000000002c00000000010001000002003b', 'hex');
		expect(await sniffBytes(gif)).toEqual({ ok: false, reason: 'unsupported', detected: 'image/gif' });
	});
});
