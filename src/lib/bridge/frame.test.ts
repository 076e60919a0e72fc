// The binary sample-frame codec: round trips, zero-copy views, and thousands of malformed frames.
import { describe, expect, it } from 'vitest';
import {
	FRAME_FLAG_DISCONTINUITY,
	FRAME_HEADER_BYTES,
	FRAME_MAGIC,
	FrameError,
	allocFrame,
	decodeFrame,
	encodeFrame,
	extractChannel,
	finishFrame,
	frameByteLength,
	tryDecodeFrame
} from './frame';

/** A tiny deterministic generator so the fuzz cases are reproducible. */
function lcg(seed: number): () => number {
	let s = seed >>> 0;
	return () => {
		s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
		return s / 4294967296;
	};
}

describe('frame codec', () => {
	it('round-trips header and samples exactly', () => {
		const samples = Float32Array.from({ length: 2 * 5 }, (_, i) => (i - 4.5) / 7);
		const header = {
			seq: 0xfffffffe,
			firstSampleIndex: 2 ** 52 + 3,
			sampleRateHz: 192_000,
			channels: 2,
			sampleCount: 5,
			flags: FRAME_FLAG_DISCONTINUITY
		};
		const buf = encodeFrame(header, samples);
		expect(buf.byteLength).toBe(FRAME_HEADER_BYTES + 40);
		const f = decodeFrame(buf);
		expect(f).toMatchObject({ ...header, version: 1, kind: 1, copied: false });
		expect(Array.from(f.samples)).toEqual(Array.from(samples));
		expect(Array.from(extractChannel(f, 1))).toEqual([1, 3, 5, 7, 9].map((i) => samples[i]));
	});

	it('writes the documented little-endian layout', () => {
		const buf = encodeFrame(
			{ seq: 7, firstSampleIndex: 4096, sampleRateHz: 48_000, channels: 1, sampleCount: 1 },
			[0.5]
		);
		const dv = new DataView(buf);
		expect(dv.getUint32(0, true)).toBe(FRAME_MAGIC);
		expect(new TextDecoder().decode(new Uint8Array(buf, 0, 4))).toBe('BLSF');
		expect(dv.getUint16(6, true)).toBe(1);
		expect(dv.getUint32(8, true)).toBe(7);
		expect(dv.getUint32(12, true)).toBe(48_000);
		expect(dv.getFloat64(16, true)).toBe(4096);
		expect(dv.getUint32(24, true)).toBe(1);
		expect(dv.getFloat32(32, true)).toBe(0.5);
	});

	it('gives a zero-copy view on an ArrayBuffer (what a worker receives) and copies unaligned Node buffers', () => {
		const { buffer, samples } = allocFrame({
			seq: 1,
			firstSampleIndex: 0,
			sampleRateHz: 48_000,
			channels: 2,
			sampleCount: 3
		});
		samples.set([1, 2, 3, 4, 5, 6]);
		finishFrame({ buffer, samples });
		const view = decodeFrame(buffer);
		expect(view.copied).toBe(false);
		expect(view.samples.buffer).toBe(buffer);
		const shifted = new Uint8Array(buffer.byteLength + 1);
		shifted.set(new Uint8Array(buffer), 1);
		const copy = decodeFrame(shifted.subarray(1));
		expect(copy.copied).toBe(true);
		expect(Array.from(copy.samples)).toEqual([1, 2, 3, 4, 5, 6]);
	});

	it('refuses bad headers when encoding', () => {
		expect(() =>
			encodeFrame({ seq: 0, firstSampleIndex: 0, sampleRateHz: 48_000, channels: 0, sampleCount: 1 }, [])
		).toThrow(FrameError);
		expect(() =>
			encodeFrame({ seq: 0, firstSampleIndex: -1, sampleRateHz: 48_000, channels: 1, sampleCount: 1 }, [0])
		).toThrow(FrameError);
		expect(() =>
			encodeFrame(
				{ seq: 0, firstSampleIndex: 0, sampleRateHz: 48_000, channels: 2, sampleCount: 2 },
				[0, 0, 0]
			)
		).toThrow(/expected 4/);
	});

	it('answers thousands of random and truncated frames with FrameError only', () => {
		const rnd = lcg(1234);
		const good = new Uint8Array(
			encodeFrame(
				{ seq: 9, firstSampleIndex: 100, sampleRateHz: 48_000, channels: 2, sampleCount: 64 },
				new Float32Array(128).fill(0.25)
			)
		);
		const codes = new Map<string, number>();
		let accepted = 0;
		for (let i = 0; i < 5000; i++) {
			let bytes: Uint8Array;
			const mode = i % 4;
			if (mode === 0)
				bytes = good.slice(0, Math.floor(rnd() * good.length)); // truncated
			else if (mode === 1) {
				bytes = good.slice();
				for (let k = 0; k < 1 + rnd() * 4; k++)
					bytes[Math.floor(rnd() * FRAME_HEADER_BYTES)] = Math.floor(rnd() * 256);
			} else if (mode === 2)
				bytes = Uint8Array.from({ length: Math.floor(rnd() * 600) }, () => Math.floor(rnd() * 256));
			else {
				bytes = new Uint8Array(good.length + 1 + Math.floor(rnd() * 8));
				bytes.set(good);
			}
			const r = tryDecodeFrame(bytes);
			if (r.ok) {
				accepted++;
				expect(r.frame.samples.length).toBe(r.frame.channels * r.frame.sampleCount);
				expect(bytes.length).toBe(frameByteLength(r.frame.channels, r.frame.sampleCount));
			} else codes.set(r.code, (codes.get(r.code) ?? 0) + 1);
		}
		// Every truncated, random and overlong frame is refused; some header mutations (seq, flags) stay valid.
		expect(accepted).toBeLessThan(1250);
		for (const code of ['too-short', 'bad-magic', 'bad-length']) expect(codes.get(code)).toBeGreaterThan(0);
	});
});
