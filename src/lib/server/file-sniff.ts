// What an uploaded file is, decided by its bytes: the magic numbers at its start (the `file-type`
// package) and a check that it is whole (its format's end marker or declared length). The name and
// the browser's claimed type are never consulted.
import { fileTypeFromBuffer } from 'file-type';
import type { JobFileType } from '$lib/schemas/job-files';

/** Bytes of the start `file-type` needs to decide (its documented sample size). */
export const SNIFF_HEAD_BYTES = 4100;
/** Bytes of the end kept to check a file is whole. */
export const SNIFF_TAIL_BYTES = 1024;

const FROM_FILE_TYPE: Record<string, JobFileType> = {
	jpg: 'jpeg',
	png: 'png',
	webp: 'webp',
	pdf: 'pdf',
	wav: 'wav'
};

export type SniffResult =
	| { ok: true; type: JobFileType }
	| { ok: false; reason: 'unsupported'; detected: string | null }
	| { ok: false; reason: 'truncated'; type: JobFileType };

const ascii = (b: Uint8Array, at: number, n: number) => String.fromCharCode(...b.subarray(at, at + n));
const u32le = (b: Uint8Array, at: number) =>
	(b[at] | (b[at + 1] << 8) | (b[at + 2] << 16) | (b[at + 3] << 24)) >>> 0;

function endsWith(tail: Uint8Array, bytes: number[]): boolean {
	if (tail.length < bytes.length) return false;
	const from = tail.length - bytes.length;
	return bytes.every((v, i) => tail[from + i] === v);
}

/** True when the file's own structure says it is complete. */
function isWhole(type: JobFileType, head: Uint8Array, tail: Uint8Array, bytes: number): boolean {
	switch (type) {
		case 'jpeg': {
			// ITU-T T.81 (JPEG) B.2.1: a file ends with the EOI marker FF D9. Some cameras pad after
			// it, so trailing zero bytes are allowed.
			let end = tail.length;
			while (end > 0 && tail[end - 1] === 0) end--;
			return end >= 2 && tail[end - 2] === 0xff && tail[end - 1] === 0xd9;
		}
		case 'png':
			// PNG (ISO/IEC 15948) 11.2.5: the last chunk is IEND, empty, with CRC AE 42 60 82.
			return endsWith(tail, [0, 0, 0, 0, 0x49, 0x45, 0x4e, 0x44, 0xae, 0x42, 0x60, 0x82]);
		case 'webp':
		case 'wav': {
			// RIFF: bytes 4–7 give the size after the first 8 bytes; a shorter file was cut off.
			// (Microsoft RIFF spec; WebP container spec.) Streaming writers may leave 0 or 0xFFFFFFFF.
			if (head.length < 12 || ascii(head, 0, 4) !== 'RIFF') return false;
			const declared = u32le(head, 4);
			if (declared === 0 || declared === 0xffffffff) return type === 'wav';
			return bytes >= declared + 8;
		}
		case 'pdf':
			// ISO 32000-1 7.5.5: the file trailer ends with %%EOF (followed by at most an end of line).
			return ascii(tail, 0, tail.length).includes('%%EOF');
	}
}

/**
 * Decide a file's type from its first bytes (`head`, up to SNIFF_HEAD_BYTES) and last (`tail`, up to
 * SNIFF_TAIL_BYTES) and its size: one of the accepted types, something else, or an accepted type cut off.
 */
export async function sniffFile(head: Uint8Array, tail: Uint8Array, bytes: number): Promise<SniffResult> {
	const found = head.length ? await fileTypeFromBuffer(head) : undefined;
	const type = found ? FROM_FILE_TYPE[found.ext] : undefined;
	if (!type) return { ok: false, reason: 'unsupported', detected: found?.mime ?? null };
	if (!isWhole(type, head, tail, bytes)) return { ok: false, reason: 'truncated', type };
	return { ok: true, type };
}

const BY_EXTENSION: Record<string, JobFileType> = {
	jpg: 'jpeg',
	jpeg: 'jpeg',
	jpe: 'jpeg',
	png: 'png',
	webp: 'webp',
	pdf: 'pdf',
	wav: 'wav',
	wave: 'wav'
};

/**
 * The accepted type a file name claims by its extension when the content is another one (a PNG
 * named `.wav`), else null. The content still decides the type; a name that says otherwise is
 * refused so a photo is never listed as a capture (or a capture as a photo).
 */
export function claimedOtherType(name: string, type: JobFileType): JobFileType | null {
	const ext = /\.([a-z0-9]{1,5})$/i.exec(name)?.[1]?.toLowerCase();
	const claimed = ext ? BY_EXTENSION[ext] : undefined;
	return claimed && claimed !== type ? claimed : null;
}

/** Sniff bytes held whole (tests, small files). */
export function sniffBytes(data: Uint8Array): Promise<SniffResult> {
	return sniffFile(
		data.subarray(0, SNIFF_HEAD_BYTES),
		data.subarray(Math.max(0, data.length - SNIFF_TAIL_BYTES)),
		data.length
	);
}
