// WAV reading and writing through the `wavefile` package: integer and float PCM, WAVE_FORMAT_EXTENSIBLE,
// 1–8 channels, samples normalised to ±1.0 full scale. Failures are a WavError with a one-line message.

import * as wavefileNs from 'wavefile';

type WaveFileInstance = InstanceType<typeof wavefileNs.WaveFile>;
type WaveFileCtor = new (bytes?: Uint8Array) => WaveFileInstance;

// The package's ESM entry has only a named export and its CommonJS build only a default object;
// this picks whichever the bundler or Node gave us.
const WaveFile: WaveFileCtor =
	(wavefileNs as unknown as { WaveFile?: WaveFileCtor }).WaveFile ??
	(wavefileNs as unknown as { default: { WaveFile: WaveFileCtor } }).default.WaveFile;

export class WavError extends Error {
	constructor(message: string) {
		super(message);
		this.name = 'WavError';
	}
}

export type WavFormat = 'pcm-int' | 'pcm-float';

export interface DecodedWav {
	sampleRateHz: number;
	/** One array per channel, ±1.0 = digital full scale. */
	channels: Float32Array[];
	bitsPerSample: number;
	format: WavFormat;
	/** True when the file used WAVE_FORMAT_EXTENSIBLE. */
	extensible: boolean;
}

export const MAX_WAV_CHANNELS = 8;

const FORMAT_PCM = 1;
const FORMAT_FLOAT = 3;
const FORMAT_EXTENSIBLE = 0xfffe;

interface FmtChunk {
	audioFormat: number;
	numChannels: number;
	sampleRate: number;
	blockAlign: number;
	bitsPerSample: number;
	subformat: number[];
}
interface DataChunk {
	chunkSize: number;
	samples: Uint8Array;
}

function ascii(bytes: Uint8Array, at: number): string {
	return String.fromCharCode(bytes[at], bytes[at + 1], bytes[at + 2], bytes[at + 3]);
}

export function decodeWav(bytes: Uint8Array): DecodedWav {
	if (!bytes || bytes.length === 0) throw new WavError('empty file: no WAV data');
	if (
		bytes.length < 12 ||
		(ascii(bytes, 0) !== 'RIFF' && ascii(bytes, 0) !== 'RIFX') ||
		ascii(bytes, 8) !== 'WAVE'
	)
		throw new WavError('not a WAV file (no RIFF/WAVE header)');
	let wav: WaveFileInstance;
	try {
		wav = new WaveFile(bytes);
	} catch (err) {
		const msg = err instanceof Error ? err.message : String(err);
		if (/fmt/i.test(msg))
			throw new WavError('not a usable WAV file: no "fmt " chunk (file truncated or damaged)');
		if (/data/i.test(msg)) throw new WavError('truncated WAV file: no "data" chunk');
		throw new WavError(`unreadable WAV file: ${msg.split('\n')[0]}`);
	}
	const fmt = wav.fmt as unknown as FmtChunk;
	const data = wav.data as unknown as DataChunk;
	let format = fmt.audioFormat;
	const extensible = format === FORMAT_EXTENSIBLE;
	// The sub-format GUID starts with the plain format code (1 = PCM, 3 = IEEE float).
	if (extensible) format = (fmt.subformat?.[0] ?? 0) & 0xffff;
	const bits = fmt.bitsPerSample;
	const nch = fmt.numChannels;
	const rate = fmt.sampleRate;
	if (format !== FORMAT_PCM && format !== FORMAT_FLOAT)
		throw new WavError(`unsupported WAV encoding (format code ${format}); use integer or 32-bit float PCM`);
	if (format === FORMAT_PCM && ![8, 16, 24, 32].includes(bits))
		throw new WavError(`unsupported WAV sample size: ${bits}-bit integer`);
	if (format === FORMAT_FLOAT && bits !== 32 && bits !== 64)
		throw new WavError(`unsupported WAV sample size: ${bits}-bit float`);
	if (!(nch >= 1 && nch <= MAX_WAV_CHANNELS))
		throw new WavError(`unsupported channel count ${nch} (1 to ${MAX_WAV_CHANNELS})`);
	if (!(rate > 0)) throw new WavError('WAV header gives no sample rate');
	const bytesPerSample = bits / 8;
	const frameBytes = bytesPerSample * nch;
	const raw = data.samples ?? new Uint8Array(0);
	if (data.chunkSize > raw.length)
		throw new WavError(
			`truncated WAV file: data chunk declares ${data.chunkSize} bytes, ${raw.length} present`
		);
	if (raw.length === 0) throw new WavError('WAV file has no samples');
	const frames = Math.floor(raw.length / frameBytes);
	if (frames === 0) throw new WavError('WAV file has no complete sample frame');

	const channels: Float32Array[] = [];
	for (let c = 0; c < nch; c++) channels.push(new Float32Array(frames));
	const view = new DataView(raw.buffer, raw.byteOffset, frames * frameBytes);
	const le = wav.container !== 'RIFX';
	if (format === FORMAT_FLOAT) {
		for (let i = 0; i < frames; i++)
			for (let c = 0; c < nch; c++) {
				const at = i * frameBytes + c * bytesPerSample;
				channels[c][i] = bits === 32 ? view.getFloat32(at, le) : view.getFloat64(at, le);
			}
	} else {
		// Integer PCM through wavefile's unpacker (handles 24-bit and byte order); 8-bit is unsigned.
		const samples = wav.getSamples(true, Float64Array) as unknown as Float64Array;
		const scale = 1 / 2 ** (bits - 1);
		const offset = bits === 8 ? 128 : 0;
		for (let i = 0; i < frames; i++)
			for (let c = 0; c < nch; c++) channels[c][i] = (samples[i * nch + c] - offset) * scale;
	}
	return {
		sampleRateHz: rate,
		channels,
		bitsPerSample: bits,
		format: format === FORMAT_FLOAT ? 'pcm-float' : 'pcm-int',
		extensible
	};
}

/** 32-bit float WAV of the given channels (±1.0 = full scale). */
export function encodeWav(channels: Float32Array[], sampleRateHz: number): Uint8Array {
	if (channels.length < 1 || channels.length > MAX_WAV_CHANNELS)
		throw new WavError(`cannot write ${channels.length} channels (1 to ${MAX_WAV_CHANNELS})`);
	if (!(sampleRateHz > 0) || !Number.isInteger(sampleRateHz))
		throw new WavError(`invalid sample rate ${sampleRateHz}`);
	const len = channels[0].length;
	if (channels.some((c) => c.length !== len)) throw new WavError('channels differ in length');
	const wav = new WaveFile();
	const fromScratch = (
		wav as unknown as {
			fromScratch(n: number, r: number, depth: string, s: Float64Array | Float64Array[]): void;
		}
	).fromScratch.bind(wav);
	// wavefile wants the samples as numbers per channel; Float64Array avoids a second rounding.
	const input = channels.map((c) => Float64Array.from(c));
	fromScratch(channels.length, sampleRateHz, '32f', channels.length === 1 ? input[0] : input);
	return wav.toBuffer();
}
