// Small real files for tests: photos encoded by sharp (libvips, independent of the sniffing code),
// a minimal PDF and a PCM WAV written byte by byte. Test-only helpers.
import sharp from 'sharp';

/** A `w`×`h` photo with a colour gradient; `exif` adds camera metadata with a GPS position. */
export async function photo(format: 'jpeg' | 'png' | 'webp', w = 64, h = 48, exif = false): Promise<Buffer> {
	const raw = Buffer.alloc(w * h * 3);
	for (let y = 0; y < h; y++)
		for (let x = 0; x < w; x++) {
			const i = (y * w + x) * 3;
			raw[i] = (x * 255) / w;
			raw[i + 1] = (y * 255) / h;
			raw[i + 2] = 128;
		}
	let img = sharp(raw, { raw: { width: w, height: h, channels: 3 } });
	if (exif)
		img = img.withExif({
			IFD0: { Make: 'Invented Camera Co', Model: 'IC-1' },
			IFD3: {
				GPSLatitudeRef: 'N',
				GPSLatitude: '51/1 30/1 0/1',
				GPSLongitudeRef: 'W',
				GPSLongitude: '0/1 7/1 0/1'
			}
		});
	return img.toFormat(format).toBuffer();
}

/** A one-page PDF (ISO 32000-1 structure: header, objects, xref, trailer, %%EOF). */
export function pdf(): Buffer {
	const objects = [
		'<< /Type /Catalog /Pages 2 0 R >>',
		'<< /Type /Pages /Kids [3 0 R] /Count 1 >>',
		'<< /Type /Page /Parent 2 0 R /MediaBox [0 0 200 200] >>'
	];
	let body = '%PDF-1.4\n';
	const offsets: number[] = [];
	objects.forEach((o, i) => {
		offsets.push(body.length);
		body += `${i + 1} 0 obj\n${o}\nendobj\n`;
	});
	const xref = body.length;
	body += `xref\n0 ${objects.length + 1}\n0000000000 65535 f \n`;
	for (const off of offsets) body += `${String(off).padStart(10, '0')} 00000 n \n`;
	body += `trailer\n<< /Size ${objects.length + 1} /Root 1 0 R >>\nstartxref\n${xref}\n%%EOF\n`;
	return Buffer.from(body, 'latin1');
}

/** A 16-bit PCM WAV (RIFF/WAVE, Microsoft's layout) of a sine at `freqHz`, peak `amp` of full scale. */
export function wav16(seconds = 1, rateHz = 48_000, freqHz = 1000, amp = 0.5, channels = 2): Buffer {
	const n = Math.round(seconds * rateHz);
	const dataBytes = n * channels * 2;
	const buf = Buffer.alloc(44 + dataBytes);
	buf.write('RIFF', 0, 'latin1');
	buf.writeUInt32LE(36 + dataBytes, 4);
	buf.write('WAVE', 8, 'latin1');
	buf.write('fmt ', 12, 'latin1');
	buf.writeUInt32LE(16, 16);
	buf.writeUInt16LE(1, 20);
	buf.writeUInt16LE(channels, 22);
	buf.writeUInt32LE(rateHz, 24);
	buf.writeUInt32LE(rateHz * channels * 2, 28);
	buf.writeUInt16LE(channels * 2, 32);
	buf.writeUInt16LE(16, 34);
	buf.write('data', 36, 'latin1');
	buf.writeUInt32LE(dataBytes, 40);
	let at = 44;
	for (let i = 0; i < n; i++) {
		const v = Math.round(amp * 32767 * Math.sin((2 * Math.PI * freqHz * i) / rateHz));
		for (let c = 0; c < channels; c++) {
			buf.writeInt16LE(v, at);
			at += 2;
		}
	}
	return buf;
}
