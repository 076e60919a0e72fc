// Plain result and option types of the measurement core (the zod schema in schema.ts mirrors them).

import type { WindowName } from './windows';
import type { ImdResult } from './imd';

export type Weighting = 'none' | 'a';

/**
 * What drives the unit while the frame is taken:
 * - 'tone': one sine (THD, THD+N, SNR re the tone);
 * - 'none': no stimulus (residual noise and hum: everything in the band is noise, nothing is removed);
 * - 'smpte' / 'twin-tone': two-tone IMD stimuli (THD has no meaning; IMD is measured instead).
 */
export type Stimulus = 'tone' | 'none' | 'smpte' | 'twin-tone';
export const STIMULI: readonly Stimulus[] = ['tone', 'none', 'smpte', 'twin-tone'];
export type MainsHz = 50 | 60;

/** The reference output S/N is stated against (e.g. 1 W into 8 Ω, rated power, 0.5 V for a line stage). */
export interface SnReference {
	vrms: number;
	/** Plain words shown beside the figure, e.g. "re 1 W into 8 Ω". */
	label: string;
}

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
	/** What drives the unit (default 'tone'). */
	stimulus?: Stimulus;
	/** Mains frequency for the hum breakdown (default 50). */
	mainsHz?: MainsHz;
	/**
	 * With stimulus 'tone': the fitted tone must stand this many dB above the in-band noise (harmonics
	 * removed) to count as a signal (default 10 dB); otherwise the result is `signal: false`.
	 */
	toneMarginDb?: number;
	/**
	 * With stimulus 'tone': the generator frequency. A strongest tone farther than 1 % (at least two
	 * bins) from it is not the stimulus (hum or an oscillation): `signal: false`.
	 */
	expectedFrequencyHz?: number;
	/** IMD tone frequencies (defaults: SMPTE 60 Hz + 7 kHz, twin-tone 19 + 20 kHz). */
	imdF1Hz?: number;
	imdF2Hz?: number;
	/** S/N reference output; with stimulus 'none' the result carries snDb/snWeightedDb against it. */
	snReference?: SnReference;
}

/** One line of the hum breakdown (stimulus 'none'): mains order 1 = the mains frequency itself. */
export interface HumComponent {
	order: number;
	frequencyHz: number;
	levelVrms: number;
	levelDbv: number;
	/** Inside the measurement band (outside ones are listed but not part of the noise figure). */
	inBand: boolean;
}

/** Signs of overload in the time-domain frame. */
export interface ClippingResult {
	/** Samples at or beyond 99.9 % of digital full scale (the interface itself overloads). */
	fullScaleSamples: number;
	/**
	 * Share of samples within 0.5 % of the frame's own positive or negative peak (flat tops), %; only
	 * counted when the crest factor is below 2.9 dB (a sine's is 3.01 dB), otherwise null.
	 */
	flatTopPercent: number | null;
	/** Peak over rms, dB (a sine is 3.01 dB; clipping pushes it toward 0 dB). */
	crestFactorDb: number;
	clipped: boolean;
	/** Why `clipped` is true, in plain words; null when not clipped. */
	reason: string | null;
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
	/** The stimulus this channel was analysed for. */
	stimulus: Stimulus;
	/**
	 * A measurable stimulus came back: always false with stimulus 'none'; with 'tone' false when no tone
	 * stands toneMarginDb above the noise or the strongest tone is not at expectedFrequencyHz.
	 * When false, every figure relative to a tone is null.
	 */
	signal: boolean;
	/** Why `signal` is false, in plain words; null when true. */
	signalReason: string | null;
	/** Fitted fundamental; null without a tone signal. */
	frequencyHz: number | null;
	/** Fundamental level with a tone signal; otherwise the total in-band rms. */
	levelVrms: number;
	levelDbv: number;
	levelDbu: number;
	/** dBFS with 0 dBFS = a sine peaking at digital full scale (AES17). */
	levelDbfs: number;
	/** W into loadOhms, when a load was given and a tone is measured. */
	powerW?: number;
	/** Gain relative to referenceVrms, when given; null without a tone signal. */
	gainDb?: number | null;
	/** Harmonics 2…maxHarmonic inside the band, relative to the fundamental; null without a tone. */
	thdPercent: number | null;
	thdDb: number | null;
	/** Orders 2…maxHarmonic that fall above the band or Nyquist (not counted: THD may be understated). */
	harmonicsBeyondBand: number[];
	/** Everything in the band except the fundamental, relative to the total in-band rms (weighted when weighting = 'a'). */
	thdnPercent: number | null;
	thdnDb: number | null;
	/**
	 * In-band rms, unweighted. With a tone: everything but the fundamental, its harmonics and DC. With
	 * stimulus 'none' (or no signal): the total in-band rms without DC, nothing removed. With IMD
	 * stimuli: everything in the band but the two tones.
	 */
	noiseVrms: number;
	noiseDbv: number;
	/** Tone-to-noise ratio while the tone plays (fundamental over noiseVrms), dB; null without a tone. */
	snrDb: number | null;
	/** The same noise, A-weighted (IEC 61672-1). */
	noiseWeightedVrms: number;
	noiseWeightedDbv: number;
	/** Tone over the A-weighted noise (signal unweighted), dB; null without a tone. */
	snrWeightedDb: number | null;
	/** S/N: snReference over noiseVrms (stimulus 'none' with a reference only), dB. */
	snDb: number | null;
	/** S/N A-weighted: snReference over noiseWeightedVrms, dB. */
	snWeightedDb: number | null;
	/** Fundamental over everything else in the band (harmonics and noise), dB; null without a tone. */
	sinadDb: number | null;
	/** (SINAD − 1.76)/6.02 (IEEE 1241); null without a tone. */
	enob: number | null;
	/** Total in-band rms of the signal (unweighted). */
	totalVrms: number;
	dcVolts: number;
	harmonics: HarmonicResult[];
	/** Mains hum and its harmonics up to the 10th (stimulus 'none' only; otherwise empty). */
	hum: HumComponent[];
	/** IMD of the two-tone stimulus (stimulus 'smpte' or 'twin-tone'); null otherwise or when it cannot be measured. */
	imd: ImdResult | null;
	/** Why `imd` is null under an IMD stimulus (e.g. FFT too short for the tone spacing). */
	imdError: string | null;
	clipping: ClippingResult;
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
	stimulus: Stimulus;
	mainsHz: MainsHz;
	toneMarginDb: number;
	expectedFrequencyHz: number | null;
	snReference: SnReference | null;
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
