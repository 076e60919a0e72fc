// Real-time pacing for sources that are not clocked by hardware (simulator, WAV file): a
// block becomes due when its last sample's time has passed, as from a capture device.
import { performance } from 'node:perf_hooks';
import type { FrameOut, FrameSink } from './types';

export class Pacer {
	private startMs = 0;
	private produced = 0;
	private timer: ReturnType<typeof setTimeout> | null = null;
	private running = false;

	/**
	 * @param blockMs duration of one block
	 * @param onBlock called once per due block; `skipped` > 0 when the process fell so far
	 *   behind that older blocks were abandoned (their time is lost, as in a device overrun)
	 */
	constructor(
		private readonly blockMs: number,
		private readonly onBlock: (skipped: number) => void,
		private readonly maxCatchUp = 8
	) {}

	start(): void {
		this.running = true;
		this.startMs = performance.now();
		this.produced = 0;
		this.schedule();
	}

	stop(): void {
		this.running = false;
		if (this.timer) clearTimeout(this.timer);
		this.timer = null;
	}

	private schedule(): void {
		if (!this.running) return;
		const nextDue = this.startMs + (this.produced + 1) * this.blockMs;
		this.timer = setTimeout(this.tick, Math.max(0, nextDue - performance.now()));
	}

	private tick = (): void => {
		this.timer = null;
		if (!this.running) return;
		const due = Math.floor((performance.now() - this.startMs) / this.blockMs) - this.produced;
		let skipped = 0;
		let toRender = due;
		if (due > this.maxCatchUp) {
			skipped = due - 1;
			toRender = 1;
		}
		this.produced += due;
		for (let i = 0; i < toRender && this.running; i++) this.onBlock(i === 0 ? skipped : 0);
		this.schedule();
	};
}

/**
 * A source that renders blocks on demand and is paced by the wall clock: the simulator and a
 * replayed WAV file share this start/stop, rendering one block per due block.
 */
export abstract class PacedSource {
	abstract readonly sampleRateHz: number;
	abstract readonly blockSize: number;
	private pacer: Pacer | null = null;

	/** Render the next block now (the pacer calls this; benchmarks and tests call it directly). */
	abstract renderBlock(skippedBlocks?: number): FrameOut;

	get running(): boolean {
		return this.pacer !== null;
	}

	async start(sink: FrameSink): Promise<void> {
		this.pacer?.stop();
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
