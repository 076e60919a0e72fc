// Binary sample frames between the bench bridge and the browser: a fixed 32-byte
// little-endian header followed by interleaved Float32 samples (no DOM, no node: imports).
//
//  offset size  field
//   0     u32   magic 0x46534C42 (the bytes "BLSF")
//   4     u8    frame format version (FRAME_VERSION)
//   5     u8    frame kind (FRAME_KIND_SAMPLES)
//   6     u16   channel count (1–32)
//   8     u32   frame sequence number (per bridge boot, +1 per frame produced; gaps = dropped frames)
//  12     u32   sample rate in Hz
//  16     f64   index of the first sample (per channel) since the source started (exact below 2^53)
//  24     u32   samples per channel in this frame (1–65536)
//  28     u32   flags (bit 0: FRAME_FLAG_DISCONTINUITY, samples were lost or the source restarted)
//  32     f32[] interleaved samples: s[i * channels + c]; 1.0 = the channel's full-scale volts (peak)
//
// The payload starts on a 4-byte boundary, so a received ArrayBuffer (including one
// transferred to a worker) can be read through a Float32Array view without copying.

export const FRAME_MAGIC = 0x46534c42;
export const FRAME_VERSION = 1;
export const FRAME_KIND_SAMPLES = 1;
export const FRAME_HEADER_BYTES = 32;
export const FRAME_FLAG_DISCONTINUITY = 1;
export const FRAME_MAX_CHANNELS = 32;
export const FRAME_MAX_SAMPLES = 65536;
export const FRAME_MIN_RATE_HZ = 1000;
export const FRAME_MAX_RATE_HZ = 1_536_000;

/** True on little-endian hosts (every browser and Node platform in practice); views need it. */
export const HOST_IS_LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

export interface FrameHeader {
	seq: number;
	firstSampleIndex: number;
	sampleRateHz: number;
	channels: number;
	sampleCount: number;
	flags?: number;
}

export interface DecodedFrame extends Required<FrameHeader> {
	version: number;
	kind: number;
	/** Interleaved samples; a view into the received buffer whenever possible (see `copied`). */
	samples: Float32Array;
	/** True when the payload had to be copied (unaligned view or a big-endian host). */
	copied: boolean;
}

export class FrameError extends Error {
	constructor(
		readonly code:
			| 'too-short'
			| 'bad-magic'
			| 'bad-version'
			| 'bad-kind'
			| 'bad-channels'
			| 'bad-rate'
			| 'bad-count'
			| 'bad-index'
			| 'bad-length',
		message: string
	) {
		super(message);
		this.name = 'FrameError';
	}
}

export function frameByteLength(channels: number, sampleCount: number): number {
	return FRAME_HEADER_BYTES + channels * sampleCount * 4;
}

function checkHeader(h: FrameHeader): void {
	if (!Number.isInteger(h.channels) || h.channels < 1 || h.channels > FRAME_MAX_CHANNELS)
		throw new FrameError('bad-channels', `channel count ${h.channels} is outside 1–${FRAME_MAX_CHANNELS}`);
	if (!Number.isInteger(h.sampleCount) || h.sampleCount < 1 || h.sampleCount > FRAME_MAX_SAMPLES)
		throw new FrameError('bad-count', `sample count ${h.sampleCount} is outside 1–${FRAME_MAX_SAMPLES}`);
	if (
		!Number.isInteger(h.sampleRateHz) ||
		h.sampleRateHz < FRAME_MIN_RATE_HZ ||
		h.sampleRateHz > FRAME_MAX_RATE_HZ
	)
		throw new FrameError(
			'bad-rate',
			`sample rate ${h.sampleRateHz} Hz is outside ${FRAME_MIN_RATE_HZ}–${FRAME_MAX_RATE_HZ}`
		);
	if (!Number.isSafeInteger(h.firstSampleIndex) || h.firstSampleIndex < 0)
		throw new FrameError(
			'bad-index',
			`first-sample index ${h.firstSampleIndex} is not a non-negative safe integer`
		);
	if (!Number.isInteger(h.seq) || h.seq < 0 || h.seq > 0xffffffff)
		throw new FrameError('bad-index', `sequence number ${h.seq} is outside 0–2^32-1`);
}

/**
 * Allocate a frame and write its header; fill `samples` (a view of the payload) in place,
 * then send `buffer`. This lets the bridge render straight into the outgoing bytes.
 */
export function allocFrame(header: FrameHeader): { buffer: ArrayBuffer; samples: Float32Array } {
	checkHeader(header);
	const buffer = new ArrayBuffer(frameByteLength(header.channels, header.sampleCount));
	const dv = new DataView(buffer);
	dv.setUint32(0, FRAME_MAGIC, true);
	dv.setUint8(4, FRAME_VERSION);
	dv.setUint8(5, FRAME_KIND_SAMPLES);
	dv.setUint16(6, header.channels, true);
	dv.setUint32(8, header.seq >>> 0, true);
	dv.setUint32(12, header.sampleRateHz, true);
	dv.setFloat64(16, header.firstSampleIndex, true);
	dv.setUint32(24, header.sampleCount, true);
	dv.setUint32(28, (header.flags ?? 0) >>> 0, true);
	const n = header.channels * header.sampleCount;
	// On a big-endian host a typed-array view would write the wrong byte order; callers then
	// fill this scratch array and `finishFrame` copies it out little-endian.
	const samples = HOST_IS_LITTLE_ENDIAN
		? new Float32Array(buffer, FRAME_HEADER_BYTES, n)
		: new Float32Array(n);
	return { buffer, samples };
}

/** Only needed on big-endian hosts: writes the scratch samples of `allocFrame` into the buffer. */
export function finishFrame(frame: { buffer: ArrayBuffer; samples: Float32Array }): ArrayBuffer {
	if (!HOST_IS_LITTLE_ENDIAN) {
		const dv = new DataView(frame.buffer);
		for (let i = 0; i < frame.samples.length; i++)
			dv.setFloat32(FRAME_HEADER_BYTES + 4 * i, frame.samples[i], true);
	}
	return frame.buffer;
}

/** Encode interleaved samples (length = channels × sampleCount) into a new frame buffer. */
export function encodeFrame(header: FrameHeader, interleaved: ArrayLike<number>): ArrayBuffer {
	if (interleaved.length !== header.channels * header.sampleCount)
		throw new FrameError(
			'bad-length',
			`expected ${header.channels * header.sampleCount} samples, got ${interleaved.length}`
		);
	const frame = allocFrame(header);
	if (interleaved instanceof Float32Array || Array.isArray(interleaved)) frame.samples.set(interleaved);
	else for (let i = 0; i < interleaved.length; i++) frame.samples[i] = interleaved[i];
	return finishFrame(frame);
}

/**
 * Decode a frame. An ArrayBuffer (what a browser WebSocket with binaryType 'arraybuffer'
 * delivers) yields a zero-copy Float32Array view; a Node Buffer/Uint8Array at an unaligned
 * offset is copied. Throws FrameError with a clear message on any malformed input.
 */
export function decodeFrame(data: ArrayBuffer | ArrayBufferView): DecodedFrame {
	let buffer: ArrayBuffer;
	let offset: number;
	let length: number;
	if (data instanceof ArrayBuffer) {
		buffer = data;
		offset = 0;
		length = data.byteLength;
	} else if (ArrayBuffer.isView(data)) {
		if (!(data.buffer instanceof ArrayBuffer)) {
			// SharedArrayBuffer-backed views: copy so the view type below stays plain.
			const copy = new Uint8Array(data.byteLength);
			copy.set(new Uint8Array(data.buffer, data.byteOffset, data.byteLength));
			return decodeFrame(copy.buffer);
		}
		buffer = data.buffer;
		offset = data.byteOffset;
		length = data.byteLength;
	} else {
		throw new FrameError('too-short', 'a frame must be an ArrayBuffer or a byte view');
	}
	if (length < FRAME_HEADER_BYTES)
		throw new FrameError(
			'too-short',
			`frame of ${length} bytes is shorter than the ${FRAME_HEADER_BYTES}-byte header`
		);
	const dv = new DataView(buffer, offset, length);
	const magic = dv.getUint32(0, true);
	if (magic !== FRAME_MAGIC) throw new FrameError('bad-magic', `bad magic 0x${magic.toString(16)}`);
	const version = dv.getUint8(4);
	if (version !== FRAME_VERSION)
		throw new FrameError('bad-version', `frame version ${version} is not ${FRAME_VERSION}`);
	const kind = dv.getUint8(5);
	if (kind !== FRAME_KIND_SAMPLES) throw new FrameError('bad-kind', `unknown frame kind ${kind}`);
	const header: Required<FrameHeader> = {
		channels: dv.getUint16(6, true),
		seq: dv.getUint32(8, true),
		sampleRateHz: dv.getUint32(12, true),
		firstSampleIndex: dv.getFloat64(16, true),
		sampleCount: dv.getUint32(24, true),
		flags: dv.getUint32(28, true)
	};
	checkHeader(header);
	const expected = frameByteLength(header.channels, header.sampleCount);
	if (length !== expected)
		throw new FrameError('bad-length', `frame is ${length} bytes; its header says ${expected}`);
	const n = header.channels * header.sampleCount;
	const payloadOffset = offset + FRAME_HEADER_BYTES;
	let samples: Float32Array;
	let copied = false;
	if (HOST_IS_LITTLE_ENDIAN && payloadOffset % 4 === 0) {
		samples = new Float32Array(buffer, payloadOffset, n);
	} else if (HOST_IS_LITTLE_ENDIAN) {
		samples = new Float32Array(n);
		new Uint8Array(samples.buffer).set(new Uint8Array(buffer, payloadOffset, n * 4));
		copied = true;
	} else {
		samples = new Float32Array(n);
		for (let i = 0; i < n; i++) samples[i] = dv.getFloat32(FRAME_HEADER_BYTES + 4 * i, true);
		copied = true;
	}
	return { ...header, version, kind, samples, copied };
}

/** decodeFrame without throwing, for receive loops. */
export function tryDecodeFrame(
	data: ArrayBuffer | ArrayBufferView
): { ok: true; frame: DecodedFrame } | { ok: false; error: string; code: FrameError['code'] } {
	try {
		return { ok: true, frame: decodeFrame(data) };
	} catch (e) {
		if (e instanceof FrameError) return { ok: false, error: e.message, code: e.code };
		throw e;
	}
}

/** Copy one channel out of interleaved samples (for plotting or per-channel analysis). */
export function extractChannel(
	frame: Pick<DecodedFrame, 'samples' | 'channels' | 'sampleCount'>,
	channel: number
): Float32Array {
	const out = new Float32Array(frame.sampleCount);
	const { samples, channels } = frame;
	for (let i = 0, j = channel; i < out.length; i++, j += channels) out[i] = samples[j];
	return out;
}
