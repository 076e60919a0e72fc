// The simulator as a real-time audio source.
import { Simulator } from '../sim/simulator';
import { Pacer } from './pacer';
import { FrameWriter, type AudioSource, type FrameSink } from './types';
import type { GeneratorState, SimulatorState } from '../../src/lib/bridge/protocol';

export interface SimSourceOptions {
	sampleRateHz: number;
	channels: number;
	blockSize: number;
	seed: number;
	state?: SimulatorState;
	generator?: GeneratorState;
}

export class SimSource implements AudioSource {
	readonly kind = 'sim' as const;
	readonly label: string;
	readonly sampleRateHz: number;
	readonly channels: number;
	readonly blockSize: number;
	readonly fullScaleVolts: number[];
	readonly simulator: Simulator;
	overruns = 0;
	private readonly writer: FrameWriter;
	private pacer: Pacer | null = null;

	constructor(opts: SimSourceOptions) {
		this.sampleRateHz = opts.sampleRateHz;
		this.channels = opts.channels;
		this.blockSize = opts.blockSize;
		this.simulator = new Simulator(opts);
		this.fullScaleVolts = Array.from({ length: opts.channels }, () => this.simulator.fullScaleVolts);
		this.label = `simulator (seed ${opts.seed})`;
		this.writer = new FrameWriter(opts.sampleRateHz, opts.channels);
	}

	/** Render the next block now (the pacer calls this; benchmarks call it directly). */
	renderBlock(skippedBlocks = 0) {
		if (skippedBlocks > 0) {
			this.overruns += skippedBlocks;
			this.writer.discontinuity(skippedBlocks * this.blockSize);
		}
		const f = this.writer.alloc(this.blockSize);
		this.simulator.render(f.samples, this.blockSize);
		return f.finish();
	}

	async start(sink: FrameSink): Promise<void> {
		this.pacer = new Pacer((this.blockSize / this.sampleRateHz) * 1000, (skipped) =>
			sink(this.renderBlock(skipped))
		);
		this.pacer.start();
	}

	async stop(): Promise<void> {
		this.pacer?.stop();
		this.pacer = null;
	}
}
