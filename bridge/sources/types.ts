// The audio-source contract (simulator, WAV file, capture command) and the frame writer
// that numbers frames and samples for all of them.
import { allocFrame, finishFrame, type SourceKind } from '../../src/lib/bridge/protocol';

export interface FrameOut {
	buffer: ArrayBuffer;
	seq: number;
	firstSampleIndex: number;
	sampleCount: number;
	/** View of the interleaved payload (valid until the buffer is transferred). */
	samples: Float32Array;
}

export type FrameSink = (frame: FrameOut) => void;

export interface AudioSource {
	readonly kind: SourceKind;
	readonly label: string;
	readonly sampleRateHz: number;
	readonly channels: number;
	readonly blockSize: number;
	readonly fullScaleVolts: number[];
	/** True when the input passes DC (so a DC-offset reading means something); most audio interfaces block it. */
	readonly dcCoupled: boolean;
	/** Blocks lost at the source (late timers, a stalled or restarted command). */
	readonly overruns: number;
	start(sink: FrameSink): Promise<void>;
	stop(): Promise<void>;
}

/** Numbers frames (seq) and samples (first-sample index) for one source. */
export class FrameWriter {
	seq = 0;
	sampleIndex = 0;
	private pendingFlags = 0;

	constructor(
		readonly sampleRateHz: number,
		readonly channels: number
	) {}

	/** Mark that samples were lost or the stream restarted; the next frame carries the flag. */
	discontinuity(skippedSamples = 0): void {
		this.sampleIndex += skippedSamples;
		this.pendingFlags |= 1;
	}

	alloc(sampleCount: number): { buffer: ArrayBuffer; samples: Float32Array; finish: () => FrameOut } {
		const seq = this.seq;
		const firstSampleIndex = this.sampleIndex;
		const frame = allocFrame({
			seq,
			firstSampleIndex,
			sampleRateHz: this.sampleRateHz,
			channels: this.channels,
			sampleCount,
			flags: this.pendingFlags
		});
		this.pendingFlags = 0;
		this.seq = (this.seq + 1) >>> 0;
		this.sampleIndex += sampleCount;
		return {
			...frame,
			finish: () => ({
				buffer: finishFrame(frame),
				seq,
				firstSampleIndex,
				sampleCount,
				samples: frame.samples
			})
		};
	}
}
