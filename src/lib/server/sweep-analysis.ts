// A recorded stepped sweep (a WAV among a job's files) analysed as a frequency response: decoded
// and measured with the same code as `npm run analyze -- FILE.wav --response`. Runs on an
// analysis-pool worker (analysis-pool.ts), never on the request thread: a long sweep is seconds of work.
import { decodeWav, WavError } from '../dsp/wav';
import { analyzeSweepRecording, type SweepFileResult } from '../procedures/sweep-file';
import { AnalysisRefusal } from './snapshot-analysis';

export interface SweepTask {
	wav: Uint8Array;
	riaa: boolean;
	iecRolloff: boolean;
}

export function analyseSweepWav(task: SweepTask): SweepFileResult {
	let channels: Float32Array[];
	let sampleRateHz: number;
	try {
		({ channels, sampleRateHz } = decodeWav(task.wav));
	} catch (e) {
		if (e instanceof WavError) throw new AnalysisRefusal('file', `The WAV cannot be read: ${e.message}`);
		throw e;
	}
	try {
		return analyzeSweepRecording(channels, sampleRateHz, { riaa: task.riaa, iecRolloff: task.iecRolloff });
	} catch (e) {
		if (e instanceof RangeError) throw new AnalysisRefusal('file', `Not a stepped sweep: ${e.message}`);
		throw e;
	}
}
