// Plain result and option types of the measurement core (the zod schema in schema.ts mirrors them).

import type { WindowName } from './windows';

export type Weighting = 'none' | 'a';

export interface AnalysisOptions {
	/** Power of two, 256…1,048,576. Default: the largest power of two that fits, capped at 262,144. */
	fftSize?: number;
	/**
	 * Window of the displayed/stored magnitude spectrum. The figures (level, THD, THD+N, noise) always
	 * come from the tone fit and residual in the 7-term Blackman-Harris spectrum, whatever is chosen here.
	 */
	window?: WindowName;
	/** Measurement band in Hz, default [20, 20000]; the top is clipped to Nyquist. */
	bandHz?: [number, number];
	/** Weighting applied to THD+N. Noise and SNR are always given both unweighted and A-weighted. */
	weighting?: Weighting;
	/** Resistive load for power (P = V²/R). */
	loadOhms?: number;
	/** Input level in V rms for gain (gainDb = 20·lg(levelVrms/referenceVrms)). */
	referenceVrms?: number;
	/** Number of consecutive frames power-averaged (analyzeChannel/analyzeFrames), default 1. */
	averages?: number;
	/** Highest harmonic order counted in THD (default 10). */
	maxHarmonic?: number;
}

export interface HarmonicResult {
	order: number;
	frequencyHz: number;
	levelDbc: number;
	levelVrms: number;
}

export interface ChannelResult {
	/** Channel index, 0 = first (left). */
	channel: number;
	frequencyHz: number;
	/** Fundamental level. */
	levelVrms: number;
	levelDbv: number;
	levelDbu: number;
	/** dBFS with 0 dBFS = a sine peaking at digital full scale (AES17). */
	levelDbfs: number;
	/** W into loadOhms, when a load was given. */
	powerW?: number;
	/** Gain relative to referenceVrms, when given. */
	gainDb?: number;
	/** Harmonics 2…maxHarmonic inside the band, relative to the fundamental. */
	thdPercent: number;
	thdDb: number;
	/** Everything in the band except the fundamental, relative to the total in-band rms (weighted when weighting = 'a'). */
	thdnPercent: number;
	thdnDb: number;
	/** In-band rms of everything but the fundamental, its harmonics and DC, unweighted. */
	noiseVrms: number;
	noiseDbv: number;
	snrDb: number;
	/** The same noise, A-weighted (IEC 61672-1). SNR_A refers the unweighted fundamental to it. */
	noiseWeightedVrms: number;
	snrWeightedDb: number;
	/** Fundamental over everything else in the band (harmonics and noise), dB. */
	sinadDb: number;
	/** (SINAD − 1.76)/6.02 (IEEE 1241). */
	enob: number;
	/** Total in-band rms of the signal (unweighted). */
	totalVrms: number;
	dcVolts: number;
	harmonics: HarmonicResult[];
}

export interface AnalysisConditions {
	/** Window of the spectrum (display). */
	window: WindowName;
	/** Window used for the tone fit and residual. */
	analysisWindow: WindowName;
	method: 'sine-fit-residual';
	fftSize: number;
	averages: number;
	bandHz: [number, number];
	weighting: Weighting;
	loadOhms: number | null;
	referenceVrms: number | null;
	fullScaleVolts: number[];
	binHz: number;
	maxHarmonic: number;
	thdReference: 'fundamental';
	thdnReference: 'total-in-band';
}

export interface AnalysisResult {
	sampleRateHz: number;
	conditions: AnalysisConditions;
	channels: ChannelResult[];
	/** Level of channel 0 relative to channel 1, dB (two or more channels). */
	balanceDb?: number;
	/**
	 * Level at the louder channel's frequency in the quieter channel, relative to the louder (dB); only when
	 * channels 0 and 1 differ by 10 dB or more (one driven, one not).
	 */
	crosstalkDb?: number;
	crosstalkFromChannel?: number;
	crosstalkToChannel?: number;
}
