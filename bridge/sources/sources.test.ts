// Recorded and real sources: a capture command fed by sox generating a known tone, PCM
// decoding of every format, and a WAV file replayed in a loop.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { CmdSource, decodePcm, type PcmFormat } from './cmd';
import { WavSource, loadWav } from './wav';
import { SimSource } from './sim';
import type { PacedSource } from './pacer';
import type { FrameOut } from './types';
import { channelVolts, db, toneAmplitude } from '../testing';

const SOX = '/usr/bin/sox';
const dir = mkdtempSync(join(tmpdir(), 'bridge-src-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const soxEncoding: Record<PcmFormat, string[]> = {
	s16le: ['-e', 'signed-integer', '-b', '16'],
	s24le: ['-e', 'signed-integer', '-b', '24'],
	s32le: ['-e', 'signed-integer', '-b', '32'],
	f32le: ['-e', 'floating-point', '-b', '32']
};

/** Collect frames from a source until `samples` per channel have arrived. */
async function collect(source: CmdSource, samples: number): Promise<FrameOut[]> {
	const frames: FrameOut[] = [];
	let got = 0;
	await new Promise<void>((resolve) => {
		void source.start((f) => {
			if (got >= samples) return;
			frames.push({ ...f, samples: f.samples.slice() });
			got += f.sampleCount;
			if (got >= samples) resolve();
		});
	});
	await source.stop();
	return frames;
}

describe('cmd: source', () => {
	it.each(['s16le', 's24le', 'f32le'] as PcmFormat[])(
		'reads a 1 kHz tone at −6 dBFS from sox as %s',
		async (format) => {
			// sox "synth sine" at vol 0.5: a sine peaking at half of digital full scale, left; 3 kHz at 0.25 right.
			const cmd = `${SOX} -n -r 48000 -c 2 ${soxEncoding[format].join(' ')} -t raw - synth 2 sine 1000 sine 3000 remix 1 2v0.5 vol 0.5 2>/dev/null`;
			const source = new CmdSource({
				command: cmd,
				format,
				sampleRateHz: 48000,
				channels: 2,
				blockSize: 4800,
				fullScaleVolts: [2, 2]
			});
			const frames = await collect(source, 48000);
			expect(frames.map((f) => f.seq)).toEqual(frames.map((_, i) => i));
			expect(frames.map((f) => f.firstSampleIndex)).toEqual(frames.map((_, i) => i * 4800));
			const all = new Float32Array(48000 * 2);
			frames.slice(0, 10).forEach((f, i) => all.set(f.samples, i * 9600));
			const left = channelVolts(all, 2, 0, 1);
			const right = channelVolts(all, 2, 1, 1);
			expect(Math.abs(db(toneAmplitude(left, 1000, 48000) / 0.5))).toBeLessThan(0.01);
			expect(Math.abs(db(toneAmplitude(right, 3000, 48000) / 0.25))).toBeLessThan(0.01);
			expect(toneAmplitude(left, 3000, 48000)).toBeLessThan(1e-3);
		}
	);

	it('restarts a command that exits and marks the gap', async () => {
		const cmd = `${SOX} -n -r 8000 -c 1 -e signed-integer -b 16 -t raw - synth 0.05 sine 500 2>/dev/null`;
		const source = new CmdSource({
			command: cmd,
			format: 's16le',
			sampleRateHz: 8000,
			channels: 1,
			blockSize: 100,
			fullScaleVolts: [1],
			restartMs: 20
		});
		const frames = await collect(source, 900); // 0.05 s = 400 samples per run, so at least 3 runs
		expect(source.restarts).toBeGreaterThanOrEqual(2);
		expect(frames.some((f) => new DataView(f.buffer).getUint32(28, true) === 1)).toBe(true);
	});
});

describe('PCM decoding', () => {
	it('scales every format to ±1 full scale', () => {
		const out = new Float32Array(2);
		const b16 = Buffer.alloc(4);
		b16.writeInt16LE(-32768, 0);
		b16.writeInt16LE(16384, 2);
		decodePcm(b16, 0, 2, 's16le', out, 0);
		expect(Array.from(out)).toEqual([-1, 0.5]);
		const b24 = Buffer.from([0x00, 0x00, 0x80, 0x00, 0x00, 0x40]);
		decodePcm(b24, 0, 2, 's24le', out, 0);
		expect(Array.from(out)).toEqual([-1, 0.5]);
		const b32 = Buffer.alloc(8);
		b32.writeInt32LE(-2147483648, 0);
		b32.writeInt32LE(1073741824, 4);
		decodePcm(b32, 0, 2, 's32le', out, 0);
		expect(Array.from(out)).toEqual([-1, 0.5]);
		const bf = Buffer.alloc(8);
		bf.writeFloatLE(-0.25, 0);
		bf.writeFloatLE(0.75, 4);
		decodePcm(bf, 0, 2, 'f32le', out, 0);
		expect(Array.from(out)).toEqual([-0.25, 0.75]);
	});
});

describe('wav: source', () => {
	it('decodes a WAV file and loops it seamlessly', async () => {
		const path = join(dir, 'tone.wav');
		// 0.1 s of 500 Hz at half scale, 16-bit stereo: exactly 50 periods, so the loop is seamless.
		execFileSync(SOX, [
			'-n',
			'-r',
			'48000',
			'-c',
			'2',
			'-b',
			'16',
			path,
			'synth',
			'0.1',
			'sine',
			'500',
			'vol',
			'0.5'
		]);
		const data = await loadWav(path);
		expect(data).toMatchObject({ sampleRateHz: 48000, channels: 2 });
		expect(data.samples.length).toBe(4800 * 2);
		const src = new WavSource(data, path, 4096, [10, 10]);
		const all = new Float32Array(4096 * 6 * 2);
		for (let i = 0; i < 6; i++) {
			const f = src.renderBlock();
			expect(f.firstSampleIndex).toBe(i * 4096);
			all.set(f.samples, i * 4096 * 2);
		}
		// 24 576 samples = 5.12 loops; measure the first 24 000 (250 periods) across the seams.
		const left = channelVolts(all.subarray(0, 24000 * 2), 2, 0, 1);
		expect(Math.abs(db(toneAmplitude(left, 500, 48000) / 0.5))).toBeLessThan(0.01);
		expect(all[4800 * 2]).toBe(all[0]);
	});
});

describe('paced sources (simulator and WAV share one start/stop)', () => {
	const sources: [string, () => PacedSource][] = [
		['sim', () => new SimSource({ sampleRateHz: 48000, channels: 2, blockSize: 480, seed: 3 })],
		[
			'wav',
			() =>
				new WavSource(
					{ samples: new Float32Array(4800 * 2), sampleRateHz: 48000, channels: 2 },
					'quiet.wav',
					480,
					[10, 10]
				)
		]
	];
	it.each(sources)(
		'%s: numbered frames while started, none after stop, even when started twice',
		async (_, make) => {
			const src = make();
			const seqs: number[] = [];
			let afterStop = 0;
			let stopped = false;
			const sink = (f: FrameOut) => {
				if (stopped) afterStop++;
				else seqs.push(f.seq);
			};
			await src.start(sink);
			// A second start (a reconnecting client) must replace the first pacer, not add a second one.
			await src.start(sink);
			await new Promise<void>((resolve) => {
				const poll = setInterval(() => {
					if (seqs.length >= 4) {
						clearInterval(poll);
						resolve();
					}
				}, 5);
			});
			await src.stop();
			stopped = true;
			expect(src.running).toBe(false);
			// One stream: consecutive frame numbers, each frame once.
			expect(seqs).toEqual(seqs.map((_, i) => seqs[0] + i));
			// Several block lengths (10 ms each) later, nothing more has arrived.
			await new Promise((r) => setTimeout(r, 60));
			expect(afterStop).toBe(0);
		}
	);
});
