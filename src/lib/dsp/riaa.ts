// The RIAA / IEC 60098 playback equalisation curve and its inverse (the recording
// pre-emphasis), with the optional IEC 7950 µs low-frequency roll-off.

export const RIAA_T1_S = 3180e-6;
export const RIAA_T2_S = 318e-6;
export const RIAA_T3_S = 75e-6;
export const IEC_T4_S = 7950e-6;

export interface RiaaOptions {
	/** Include the IEC amendment's 7950 µs high-pass term (playback only). */
	iecRolloff?: boolean;
}

/** Playback gain magnitude (linear, not normalised) at `frequencyHz`. */
function playbackMagnitude(frequencyHz: number, opts: RiaaOptions): number {
	const w = 2 * Math.PI * frequencyHz;
	const num = Math.hypot(1, w * RIAA_T2_S);
	const den = Math.hypot(1, w * RIAA_T1_S) * Math.hypot(1, w * RIAA_T3_S);
	let m = num / den;
	if (opts.iecRolloff) m *= (w * IEC_T4_S) / Math.hypot(1, w * IEC_T4_S);
	return m;
}

/** Playback equalisation in dB relative to 1 kHz. */
export function riaaPlaybackDb(frequencyHz: number, opts: RiaaOptions = {}): number {
	return 20 * Math.log10(playbackMagnitude(frequencyHz, opts) / playbackMagnitude(1000, opts));
}

/** Recording (inverse) curve in dB relative to 1 kHz: the negative of playback. */
export function riaaRecordDb(frequencyHz: number, opts: RiaaOptions = {}): number {
	return -riaaPlaybackDb(frequencyHz, opts);
}

/**
 * Continuous-time playback transfer function coefficients H(s) = (b0 + b1 s)/(a0 + a1 s + a2 s²),
 * normalised to unity gain at 1 kHz, for building digital filters (bilinear transform) in the simulator.
 */
export function riaaPlaybackAnalog(): { b: [number, number]; a: [number, number, number]; gain1kHz: number } {
	const gain1kHz = 1 / playbackMagnitude(1000, {});
	return {
		b: [1, RIAA_T2_S],
		a: [1, RIAA_T1_S + RIAA_T3_S, RIAA_T1_S * RIAA_T3_S],
		gain1kHz
	};
}
