// A capture command (e.g. ALSA's arecord) writing raw interleaved PCM to stdout; the
// command's own output clocks the stream. Restarted with back-off if it exits.
import { spawn, type ChildProcess } from 'node:child_process';
import { FrameWriter, type AudioSource, type FrameSink } from './types';

export const PCM_FORMATS = ['s16le', 's24le', 's32le', 'f32le'] as const;
export type PcmFormat = (typeof PCM_FORMATS)[number];

export function bytesPerSample(format: PcmFormat): number {
	return format === 's16le' ? 2 : format === 's24le' ? 3 : 4;
}

/** Decode `count` little-endian PCM samples from `buf` at `offset` into `out` (±1 full scale). */
export function decodePcm(
	buf: Buffer,
	offset: number,
	count: number,
	format: PcmFormat,
	out: Float32Array,
	outOffset: number
): void {
	switch (format) {
		case 's16le':
			for (let i = 0; i < count; i++) out[outOffset + i] = buf.readInt16LE(offset + 2 * i) / 32768;
			break;
		case 's24le':
			for (let i = 0; i < count; i++) out[outOffset + i] = buf.readIntLE(offset + 3 * i, 3) / 8388608;
			break;
		case 's32le':
			for (let i = 0; i < count; i++) out[outOffset + i] = buf.readInt32LE(offset + 4 * i) / 2147483648;
			break;
		case 'f32le':
			for (let i = 0; i < count; i++) out[outOffset + i] = buf.readFloatLE(offset + 4 * i);
			break;
	}
}

export interface CmdSourceOptions {
	command: string;
	format: PcmFormat;
	sampleRateHz: number;
	channels: number;
	blockSize: number;
	fullScaleVolts: number[];
	/** The interface's input passes DC (--dc-coupled); most audio interfaces block it. Default false. */
	dcCoupled?: boolean;
	/** Restart delay after the command exits (ms); doubles up to 10 s while it keeps failing quickly. */
	restartMs?: number;
	report?: (msg: string) => void;
}

export class CmdSource implements AudioSource {
	readonly kind = 'cmd' as const;
	readonly label: string;
	readonly sampleRateHz: number;
	readonly channels: number;
	readonly blockSize: number;
	readonly fullScaleVolts: number[];
	readonly dcCoupled: boolean;
	overruns = 0;
	restarts = 0;
	lastStderr = '';
	private readonly writer: FrameWriter;
	private child: ChildProcess | null = null;
	private sink: FrameSink | null = null;
	private stopped = false;
	private restartTimer: ReturnType<typeof setTimeout> | null = null;
	private backoffMs: number;
	// Partial block being filled, and a partial sample frame carried between chunks.
	private block: ReturnType<FrameWriter['alloc']> | null = null;
	private filled = 0;
	private carry: Buffer = Buffer.alloc(0);

	constructor(private readonly opts: CmdSourceOptions) {
		this.label = `command ${opts.command}`;
		this.sampleRateHz = opts.sampleRateHz;
		this.channels = opts.channels;
		this.blockSize = opts.blockSize;
		this.fullScaleVolts = opts.fullScaleVolts;
		this.dcCoupled = opts.dcCoupled ?? false;
		this.writer = new FrameWriter(opts.sampleRateHz, opts.channels);
		this.backoffMs = opts.restartMs ?? 1000;
	}

	private onData(chunk: Buffer): void {
		const bps = bytesPerSample(this.opts.format);
		const frameBytes = bps * this.channels;
		let buf = this.carry.length ? Buffer.concat([this.carry, chunk]) : chunk;
		let offset = 0;
		while (buf.length - offset >= frameBytes) {
			if (!this.block) {
				this.block = this.writer.alloc(this.blockSize);
				this.filled = 0;
			}
			const frames = Math.min(this.blockSize - this.filled, Math.floor((buf.length - offset) / frameBytes));
			decodePcm(
				buf,
				offset,
				frames * this.channels,
				this.opts.format,
				this.block.samples,
				this.filled * this.channels
			);
			offset += frames * frameBytes;
			this.filled += frames;
			if (this.filled === this.blockSize) {
				const out = this.block.finish();
				this.block = null;
				this.sink?.(out);
			}
		}
		this.carry = offset < buf.length ? Buffer.from(buf.subarray(offset)) : Buffer.alloc(0);
		buf = Buffer.alloc(0);
	}

	private launch(): void {
		if (this.stopped) return;
		const startedMs = Date.now();
		// The command line is the operator's own (from the bridge's start command), so a shell is appropriate.
		const child = spawn('/bin/sh', ['-c', this.opts.command], {
			stdio: ['ignore', 'pipe', 'pipe'],
			detached: true
		});
		this.child = child;
		child.stdout!.on('data', (c: Buffer) => this.onData(c));
		child.stderr!.on('data', (c: Buffer) => {
			this.lastStderr = (this.lastStderr + c.toString('utf8')).slice(-2000);
		});
		child.on('error', (err) => this.opts.report?.(`capture command failed to start: ${err.message}`));
		child.on('close', (code, signal) => {
			if (this.child === child) this.child = null;
			if (this.stopped) return;
			// The next data belongs to a new capture: drop the partial block and mark the gap.
			this.block = null;
			this.carry = Buffer.alloc(0);
			this.writer.discontinuity();
			this.overruns++;
			this.restarts++;
			const quick = Date.now() - startedMs < 5000;
			this.backoffMs = quick ? Math.min(10_000, this.backoffMs * 2) : (this.opts.restartMs ?? 1000);
			this.opts.report?.(
				`capture command exited (${signal ?? code}); restarting in ${this.backoffMs} ms${this.lastStderr ? `: ${this.lastStderr.trim().split('\n').pop()}` : ''}`
			);
			this.restartTimer = setTimeout(() => {
				this.restartTimer = null;
				this.launch();
			}, this.backoffMs);
		});
	}

	async start(sink: FrameSink): Promise<void> {
		this.sink = sink;
		this.stopped = false;
		this.launch();
	}

	async stop(): Promise<void> {
		this.stopped = true;
		if (this.restartTimer) clearTimeout(this.restartTimer);
		this.restartTimer = null;
		const child = this.child;
		this.child = null;
		if (child && child.exitCode === null && child.signalCode === null) {
			const closed = new Promise<void>((resolve) => child.once('close', () => resolve()));
			try {
				// Negative pid: the whole process group, so the shell's children stop too.
				process.kill(-child.pid!, 'SIGTERM');
			} catch {
				child.kill('SIGTERM');
			}
			const timeout = setTimeout(() => {
				try {
					process.kill(-child.pid!, 'SIGKILL');
				} catch {
					/* already gone */
				}
			}, 2000);
			await closed;
			clearTimeout(timeout);
		}
	}
}
