// The frequency response (and phono equalisation) of a recorded stepped-sine sweep: the same
// figures a bench sweep gives, from a WAV the shop recorded with its own generator. Pure: the CLI
// (`npm run analyze -- FILE.wav --response`), tests and benchmarks share it.
import { findSteps } from '$lib/dsp/stepped-sweep';
import { riaaPlaybackDb } from '$lib/dsp/riaa';
import { flatness } from './sweep';

export interface SweepFileChannel {
	levelDbv: number;
	/** Re the step nearest 1 kHz, dB. */
	relativeDb: number;
	/** With RIAA: relativeDb minus the RIAA playback curve re 1 kHz, dB. */
	riaaDeviationDb?: number;
}

export interface SweepFileResult {
	steps: { frequencyHz: number; channels: SweepFileChannel[] }[];
	/** Per channel: ± half the spread of relativeDb over all steps (of riaaDeviationDb with RIAA), dB. */
	channels: { flatnessDb: number }[];
}

export interface SweepFileOptions {
	riaa?: boolean;
	/** IEC 7950 µs term in the expected playback curve. */
	iecRolloff?: boolean;
	/** Volts peak at sample value 1.0 (default 1). */
	fullScaleVolts?: number;
}

export function analyzeSweepRecording(
	channels: readonly Float32Array[],
	sampleRateHz: number,
	opts: SweepFileOptions = {}
): SweepFileResult {
	const found = findSteps(channels, sampleRateHz);
	if (found.length < 2)
		throw new RangeError(
			`found ${found.length} steady step(s): a stepped sweep needs two or more tones of at least 150 ms, separated by at most 50 ms`
		);
	const fsv = opts.fullScaleVolts ?? 1;
	const ref = found.reduce((best, s) =>
		Math.abs(Math.log(s.frequencyHz / 1000)) < Math.abs(Math.log(best.frequencyHz / 1000)) ? s : best
	);
	const refF = ref.frequencyHz;
	const steps = found.map((s) => ({
		frequencyHz: s.frequencyHz,
		channels: s.amplitudes.map((amp, ch): SweepFileChannel => {
			const relativeDb = 20 * Math.log10(amp / ref.amplitudes[ch]);
			const out: SweepFileChannel = { levelDbv: 20 * Math.log10((amp * fsv) / Math.SQRT2), relativeDb };
			if (opts.riaa) {
				// The curve re the same reference step (the step nearest 1 kHz), so a reference a little off 1 kHz cancels.
				const curve =
					riaaPlaybackDb(s.frequencyHz, { iecRolloff: opts.iecRolloff }) -
					riaaPlaybackDb(refF, { iecRolloff: opts.iecRolloff });
				out.riaaDeviationDb = relativeDb - curve;
			}
			return out;
		})
	}));
	const freqs = steps.map((s) => s.frequencyHz);
	const result: SweepFileResult = {
		steps,
		channels: channels.map((_, ch) => {
			const v = steps.map((s) => (opts.riaa ? s.channels[ch].riaaDeviationDb! : s.channels[ch].relativeDb));
			return { flatnessDb: flatness(freqs, v, 0, Infinity)?.plusMinusDb ?? 0 };
		})
	};
	return result;
}
