// WAV decoding checked against files made by Debian's sox in a temp dir, and against sox's own statistics.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { analyzeChannel } from './analyzer';
import { decodeWav, encodeWav, WavError } from './wav';

const SOX = '/usr/bin/sox';
const dir = mkdtempSync(join(tmpdir(), 'benchlight-wav-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function sox(args: string[]): string {
	// sox prints its statistics on stderr.
	return execFileSync(SOX, args, { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
}
function soxStderr(args: string[]): string {
	const r = spawnSync(SOX, args, { encoding: 'utf8' });
	if (r.status !== 0) throw new Error(`sox ${args.join(' ')} failed: ${r.stderr}`);
	return r.stderr;
}
/** RMS amplitude of one channel as sox's `stat` reports it (6 decimals, full scale ±1). */
function soxRms(file: string, channel: number): number {
	const out = soxStderr([file, '-n', 'remix', String(channel + 1), 'stat']);
	const m = /RMS\s+amplitude:\s+([\d.]+)/.exec(out);
	if (!m) throw new Error(`no RMS in sox output: ${out}`);
	return Number(m[1]);
}
function rms(x: Float32Array): number {
	let s = 0;
	for (const v of x) s += v * v;
	return Math.sqrt(s / x.length);
}

// One tone per channel (sox cycles through the listed tones), each channel at its own level via remix.
const TONES_HZ = [440, 1000, 1500, 2500, 3150, 5000, 6300, 8000];
function makeFile(name: string, encoding: string[], channels: number, rate = 48000): string {
	const file = join(dir, name);
	const synth = ['synth', '0.5', ...TONES_HZ.slice(0, channels).flatMap((f) => ['sine', String(f)])];
	const remix = [
		'remix',
		...Array.from({ length: channels }, (_, c) => `${c + 1}v${(0.9 / (c + 1)).toFixed(4)}`)
	];
	sox(['-D', '-n', '-r', String(rate), ...encoding, '-c', String(channels), file, ...synth, ...remix]);
	return file;
}

const CASES: {
	name: string;
	enc: string[];
	channels: number;
	bits: number;
	format: string;
	extensible: boolean;
}[] = [
	{
		name: 'int16-mono.wav',
		enc: ['-b', '16', '-e', 'signed-integer'],
		channels: 1,
		bits: 16,
		format: 'pcm-int',
		extensible: false
	},
	{
		name: 'int16-stereo.wav',
		enc: ['-b', '16', '-e', 'signed-integer'],
		channels: 2,
		bits: 16,
		format: 'pcm-int',
		extensible: false
	},
	{
		name: 'int24-stereo.wav',
		enc: ['-b', '24', '-e', 'signed-integer'],
		channels: 2,
		bits: 24,
		format: 'pcm-int',
		extensible: true
	},
	{
		name: 'int32-stereo.wav',
		enc: ['-b', '32', '-e', 'signed-integer'],
		channels: 2,
		bits: 32,
		format: 'pcm-int',
		extensible: true
	},
	{
		name: 'float32-stereo.wav',
		enc: ['-b', '32', '-e', 'floating-point'],
		channels: 2,
		bits: 32,
		format: 'pcm-float',
		extensible: false
	},
	{
		name: 'uint8-mono.wav',
		enc: ['-b', '8', '-e', 'unsigned-integer'],
		channels: 1,
		bits: 8,
		format: 'pcm-int',
		extensible: false
	},
	{
		name: 'int16-6ch.wav',
		enc: ['-b', '16', '-e', 'signed-integer'],
		channels: 6,
		bits: 16,
		format: 'pcm-int',
		extensible: true
	},
	{
		name: 'int24-8ch.wav',
		enc: ['-b', '24', '-e', 'signed-integer'],
		channels: 8,
		bits: 24,
		format: 'pcm-int',
		extensible: true
	},
	{
		name: 'float32-8ch.wav',
		enc: ['-b', '32', '-e', 'floating-point'],
		channels: 8,
		bits: 32,
		format: 'pcm-float',
		extensible: false
	}
];

describe('decodeWav on sox-made files', () => {
	for (const c of CASES) {
		it(`${c.name}: header, channel order and rms match sox`, () => {
			const file = makeFile(c.name, c.enc, c.channels);
			const wav = decodeWav(readFileSync(file));
			expect(wav.sampleRateHz).toBe(48000);
			expect(wav.channels.length).toBe(c.channels);
			expect(wav.bitsPerSample).toBe(c.bits);
			expect(wav.format).toBe(c.format);
			expect(wav.extensible).toBe(c.extensible);
			expect(wav.channels[0].length).toBe(24000);
			for (let ch = 0; ch < c.channels; ch++) {
				// sox `stat` prints 6 decimals; 8-bit quantisation is coarse but sox sees the same samples.
				expect(Math.abs(rms(wav.channels[ch]) - soxRms(file, ch)), `channel ${ch}`).toBeLessThanOrEqual(
					5e-7 + 1e-9
				);
				const r = analyzeChannel(wav.channels[ch], wav.sampleRateHz, 1, { fftSize: 16384 });
				expect(Math.abs(r.frequencyHz! - TONES_HZ[ch])).toBeLessThan(0.05);
			}
		});
	}

	it('cross-checks the level column of `sox stats` too (RMS lev dB, 2 decimals)', () => {
		const file = makeFile('stats.wav', ['-b', '24', '-e', 'signed-integer'], 2);
		const out = soxStderr([file, '-n', 'stats']);
		const line = out.split('\n').find((l) => l.startsWith('RMS lev dB'));
		const cols = (line ?? '').trim().split(/\s+/).slice(3).map(Number); // Overall, Ch1, Ch2 → per channel
		const wav = decodeWav(readFileSync(file));
		for (let ch = 0; ch < 2; ch++)
			expect(Math.abs(20 * Math.log10(rms(wav.channels[ch])) - cols[ch + 1])).toBeLessThanOrEqual(
				0.005 + 1e-9
			);
	});

	it('reads WAVE_FORMAT_EXTENSIBLE with an IEEE-float sub-format (header built here)', () => {
		const n = 1000;
		const data = new Float32Array(n * 2).map((_, i) => ((i % 2 ? -1 : 1) * (i >> 1)) / n);
		const bytes = new Uint8Array(68 + data.byteLength);
		const v = new DataView(bytes.buffer);
		const str = (at: number, s: string) => [...s].forEach((ch, i) => (bytes[at + i] = ch.charCodeAt(0)));
		str(0, 'RIFF');
		v.setUint32(4, 60 + data.byteLength, true);
		str(8, 'WAVE');
		str(12, 'fmt ');
		v.setUint32(16, 40, true); // WAVEFORMATEXTENSIBLE: 18-byte WAVEFORMATEX + 22-byte extension
		v.setUint16(20, 0xfffe, true);
		v.setUint16(22, 2, true);
		v.setUint32(24, 96000, true);
		v.setUint32(28, 96000 * 8, true);
		v.setUint16(32, 8, true);
		v.setUint16(34, 32, true);
		v.setUint16(36, 22, true);
		v.setUint16(38, 32, true); // valid bits
		v.setUint32(40, 3, true); // channel mask FL|FR
		// KSDATAFORMAT_SUBTYPE_IEEE_FLOAT {00000003-0000-0010-8000-00aa00389b71}
		v.setUint32(44, 3, true);
		bytes.set([0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71], 48);
		str(60, 'data');
		v.setUint32(64, data.byteLength, true);
		bytes.set(new Uint8Array(data.buffer), 68);
		const wav = decodeWav(bytes);
		expect(wav.format).toBe('pcm-float');
		expect(wav.extensible).toBe(true);
		expect(wav.sampleRateHz).toBe(96000);
		expect(wav.channels[0][500]).toBeCloseTo(0.5, 7);
		expect(wav.channels[1][500]).toBeCloseTo(-0.5, 7);
	});
});

describe('encodeWav', () => {
	it('writes 32-bit float that sox reads back with the same rms', () => {
		const n = 48000;
		const left = new Float32Array(n).map((_, i) => 0.7 * Math.sin((2 * Math.PI * 997 * i) / 48000));
		const right = new Float32Array(n).map((_, i) => 0.07 * Math.sin((2 * Math.PI * 1999 * i) / 48000));
		const bytes = encodeWav([left, right], 48000);
		const file = join(dir, 'encoded.wav');
		writeFileSync(file, bytes);
		expect(soxStderr([file, '-n', 'stat']).length).toBeGreaterThan(0);
		expect(Math.abs(soxRms(file, 0) - rms(left))).toBeLessThanOrEqual(5e-7 + 1e-9);
		expect(Math.abs(soxRms(file, 1) - rms(right))).toBeLessThanOrEqual(5e-7 + 1e-9);
		const back = decodeWav(bytes);
		expect(back.format).toBe('pcm-float');
		expect(back.channels[0]).toEqual(left);
		expect(back.channels[1]).toEqual(right);
	});
});

describe('decodeWav errors: one clear line, never a stack trace', () => {
	const good = () => readFileSync(makeFile('good.wav', ['-b', '16', '-e', 'signed-integer'], 2));
	const cases: [string, () => Uint8Array, RegExp][] = [
		['empty file', () => new Uint8Array(0), /empty/],
		['not a WAV (text)', () => new TextEncoder().encode('name,level\nL,-3\n'), /not a WAV/],
		['truncated inside the header', () => good().subarray(0, 30), /truncated|no "(fmt |data)"/],
		['header only', () => good().subarray(0, 44), /truncated/],
		['truncated data', () => good().subarray(0, 1001), /truncated.*declares/],
		['μ-law', () => readFileSync(makeFile('ulaw.wav', ['-e', 'u-law'], 1, 8000)), /unsupported WAV encoding/],
		[
			'IMA ADPCM',
			() => readFileSync(makeFile('adpcm.wav', ['-e', 'ima-adpcm'], 1, 8000)),
			/unsupported WAV encoding/
		],
		['9 channels', () => readFileSync(makeNineChannels()), /unsupported channel count 9/]
	];
	for (const [label, bytes, re] of cases) {
		it(label, () => {
			let caught: unknown;
			try {
				decodeWav(bytes());
			} catch (err) {
				caught = err;
			}
			expect(caught).toBeInstanceOf(WavError);
			const msg = (caught as WavError).message;
			expect(msg).toMatch(re);
			expect(msg).not.toMatch(/\n/);
		});
	}

	it('a data chunk of zero length is "no samples"', () => {
		const file = join(dir, 'empty-data.wav');
		sox(['-n', '-r', '48000', '-b', '16', '-c', '1', file, 'trim', '0', '0']);
		expect(() => decodeWav(readFileSync(file))).toThrow(/no samples|no "data"/);
	});
});

function makeNineChannels(): string {
	const file = join(dir, 'nine.wav');
	sox(['-D', '-n', '-r', '8000', '-b', '16', '-c', '9', file, 'synth', '0.1', 'sine', '440']);
	return file;
}
