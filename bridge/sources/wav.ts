// A WAV file replayed in real time, looping (decoded with `wavefile`).
import { readFile } from 'node:fs/promises';
import { basename } from 'node:path';
import * as wavefile from 'wavefile';
import { PacedSource } from './pacer';
import { FrameWriter, type AudioSource, type FrameOut } from './types';
import { FRAME_MAX_CHANNELS, FRAME_MIN_RATE_HZ, FRAME_MAX_RATE_HZ } from '../../src/lib/bridge/protocol';

// wavefile ships CommonJS for Node and an ES module for bundlers; take the class from either shape.
type WaveFileClass = typeof wavefile.WaveFile;
const wavefileModule = wavefile as unknown as {
	WaveFile?: WaveFileClass;
	default?: { WaveFile: WaveFileClass };
};
const WaveFile = (wavefileModule.WaveFile ?? wavefileModule.default?.WaveFile) as WaveFileClass;

/** Interleaved float samples (±1 full scale) and the format of a WAV file. */
export async function loadWav(
	path: string
): Promise<{ samples: Float32Array; sampleRateHz: number; channels: number }> {
	const wav = new WaveFile(await readFile(path));
	const fmt = wav.fmt as { sampleRate: number; numChannels: number };
	const channels = fmt.numChannels;
	const sampleRateHz = fmt.sampleRate;
	if (!(channels >= 1 && channels <= FRAME_MAX_CHANNELS))
		throw new Error(`${path}: ${channels} channels is not supported`);
	if (!(sampleRateHz >= FRAME_MIN_RATE_HZ && sampleRateHz <= FRAME_MAX_RATE_HZ))
		throw new Error(`${path}: sample rate ${sampleRateHz} Hz is not supported`);
	// 32-bit float keeps every integer format's values exactly, scaled to ±1.
	if (wav.bitDepth !== '32f') wav.toBitDepth('32f');
	const raw = wav.getSamples(true, Float32Array) as unknown as Float32Array;
	if (raw.length < channels) throw new Error(`${path}: no samples`);
	const frames = Math.floor(raw.length / channels);
	return { samples: raw.subarray(0, frames * channels), sampleRateHz, channels };
}

export class WavSource extends PacedSource implements AudioSource {
	readonly kind = 'wav' as const;
	readonly label: string;
	/** A recording says nothing reliable about DC. */
	readonly dcCoupled = false;
	overruns = 0;
	private readonly writer: FrameWriter;
	private pos = 0; // frame position in the file

	constructor(
		private readonly data: { samples: Float32Array; sampleRateHz: number; channels: number },
		path: string,
		readonly blockSize: number,
		readonly fullScaleVolts: number[]
	) {
		super();
		this.label = `file ${basename(path)}`;
		this.writer = new FrameWriter(data.sampleRateHz, data.channels);
	}

	static async open(
		path: string,
		blockSize: number,
		fullScaleVolts: (channels: number) => number[]
	): Promise<WavSource> {
		const data = await loadWav(path);
		return new WavSource(data, path, blockSize, fullScaleVolts(data.channels));
	}

	get sampleRateHz(): number {
		return this.data.sampleRateHz;
	}
	get channels(): number {
		return this.data.channels;
	}

	renderBlock(skippedBlocks = 0): FrameOut {
		const ch = this.channels;
		const total = this.data.samples.length / ch;
		if (skippedBlocks > 0) {
			this.overruns += skippedBlocks;
			this.writer.discontinuity(skippedBlocks * this.blockSize);
			this.pos = (this.pos + skippedBlocks * this.blockSize) % total;
		}
		const f = this.writer.alloc(this.blockSize);
		let written = 0;
		while (written < this.blockSize) {
			const take = Math.min(this.blockSize - written, total - this.pos);
			f.samples.set(this.data.samples.subarray(this.pos * ch, (this.pos + take) * ch), written * ch);
			written += take;
			this.pos += take;
			if (this.pos >= total) this.pos = 0;
		}
		return f.finish();
	}
}
