// The simulator as a real-time audio source.
import { Simulator } from '../sim/simulator';
import { PacedSource } from './pacer';
import { FrameWriter, type AudioSource, type FrameOut } from './types';
import type { GeneratorState, SimulatorState } from '../../src/lib/bridge/protocol';

export interface SimSourceOptions {
	sampleRateHz: number;
	channels: number;
	blockSize: number;
	seed: number;
	state?: SimulatorState;
	generator?: GeneratorState;
	/** Simulated seconds per real second (the protection relay's timer follows it). */
	timeScale?: number;
}

export class SimSource extends PacedSource implements AudioSource {
	readonly kind = 'sim' as const;
	readonly label: string;
	readonly sampleRateHz: number;
	readonly channels: number;
	readonly blockSize: number;
	readonly fullScaleVolts: number[];
	/** The simulated analyzer input is DC-coupled, so the dc-offset fault can be read. */
	readonly dcCoupled = true;
	readonly simulator: Simulator;
	overruns = 0;
	private readonly writer: FrameWriter;

	constructor(opts: SimSourceOptions) {
		super();
		this.sampleRateHz = opts.sampleRateHz;
		this.channels = opts.channels;
		this.blockSize = opts.blockSize;
		this.simulator = new Simulator(opts);
		this.fullScaleVolts = Array.from({ length: opts.channels }, () => this.simulator.fullScaleVolts);
		this.label = `simulator (seed ${opts.seed})`;
		this.writer = new FrameWriter(opts.sampleRateHz, opts.channels);
	}

	/** Render the next block now (the pacer calls this; benchmarks call it directly). */
	renderBlock(skippedBlocks = 0): FrameOut {
		if (skippedBlocks > 0) {
			this.overruns += skippedBlocks;
			this.writer.discontinuity(skippedBlocks * this.blockSize);
		}
		const f = this.writer.alloc(this.blockSize);
		this.simulator.render(f.samples, this.blockSize);
		return f.finish();
	}
}
