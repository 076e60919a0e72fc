// The bench simulator: a believable receiver/amplifier between the generator and the
// analyzer input, deterministic for a given seed. Its linear part is exact (tones are
// synthesised through the chain's complex response; noise runs through the same biquads in
// the time domain), so a set gain reads back exactly; the output stage adds the distortion.
//
// Signal chain per channel:
//   generator → [inverse-RIAA network, phono] → input stage → [RIAA playback, phono]
//   → volume → 10-band EQ → low/high filters → + DC → output stage (crossover, gentle
//   curvature, soft clip at the rails, weak device) → + hum, noise floor → protection relay
//   → dummy load → analyzer input (sample = volts / full-scale volts)
// A phono stage driven past its own swing (PHONO_STAGE_CLIP_V) clips too: then the tones are
// made at the phono stage's output and run through the rest of the chain in the time domain.
import {
	DEFAULT_SIMULATOR_STATE,
	EQ_BAND_CENTRES_HZ,
	GENERATOR_OFF,
	OUTPUT_HEADROOM_V,
	PHONO_GAIN_1KHZ_DB,
	PHONO_STAGE_CLIP_V,
	RELAY_RESET_HYSTERESIS_C,
	WEAK_DEVICE_MAX_CURRENT_A,
	type GeneratorState,
	type SimulatorState
} from '../../src/lib/bridge/protocol';
import {
	BiquadState,
	IDENTITY,
	biquadResponse,
	cmul,
	highPass,
	isIdentity,
	lowPass,
	peaking,
	riaaPlaybackBiquad,
	riaaPlaybackComplex,
	runBiquadPair,
	type Biquad
} from './filters';
import { Rng } from './rng';
import { NOMINAL_IDLE_CURRENT_A, type AmplifierParams } from './thermal';

/** Peak volts at sample value 1.0 on every simulator channel: room for a ±39 V swing and DC. */
export const SIM_FULL_SCALE_VOLTS = 50;
export const EQ_Q = 1.41;
const FILTER_Q = Math.SQRT1_2;
/** Input coupling capacitor corner (1st-order high-pass), Hz. */
export const INPUT_COUPLING_HZ = 1.5;
/** Closed-loop bandwidth of the power amplifier (1st-order low-pass), Hz. */
export const AMP_BANDWIDTH_HZ = 150_000;
// Noise densities (V/√Hz): output stage, line input referred, phono input referred. With the
// default 26 dB volume they give about −101 dBV unweighted in 20 Hz–20 kHz (from memory:
// typical of a decent receiver), the phono input about 30 dB worse, as real ones are.
export const OUTPUT_NOISE_V_PER_RTHZ = 40e-9;
export const LINE_NOISE_V_PER_RTHZ = 2.5e-9;
export const PHONO_NOISE_V_PER_RTHZ = 1.5e-9;
const NOISY_SELECTOR_FACTOR = 30;
/** Crossover region width after feedback (V) and the notch depth at correct / zero bias (V). */
const CROSSOVER_WIDTH_V = 0.03;
const CROSSOVER_DEPTH_MIN_V = 4e-5;
const CROSSOVER_DEPTH_ZERO_BIAS_V = 0.008;
/** Effective bias fraction while the under-bias fault is on. */
export const UNDER_BIAS_FRACTION = 0.15;
// Gentle output-stage curvature relative to the swing: about 0.005 % THD at 4 W into 8 Ω,
// rising towards clipping (from memory: typical of a good class-AB design).
// Exported so known-answer tests can work the IMD products out analytically.
export const CURVE_A2 = 0.0004;
export const CURVE_A3 = 0.004;
/** Soft-clip knee as a fraction of the clip voltage. */
const CLIP_KNEE = 0.95;
// Hum at the output (V peak) per mains harmonic 1..8: field pickup at odd orders, rectifier
// ripple at even orders; right channel a little quieter (from memory, about −102 dBV total).
const HUM_PEAK_V = [6e-6, 9e-6, 3e-6, 2.5e-6, 1e-6, 1e-6, 0.5e-6, 0.5e-6];
export const TIRED_CAP_EVEN_FACTOR = 40;
export const TIRED_CAP_ODD_FACTOR = 3;
/** What the analyzer reads with the protection relay open: its own input noise (V rms, from memory: a decent interface). */
export const ANALYZER_FLOOR_VRMS = 2e-6;
const PHONO_HUM_FACTOR = 3;
const SEGMENT = 256;

const SIDE_NAMES = ['left', 'right'] as const;

interface Tone {
	frequencyHz: number;
	amplitudeV: number;
	drive: 'both' | 'left' | 'right';
	phaseCycles: number;
}

export interface SimulatorOptions {
	sampleRateHz: number;
	channels: number;
	seed: number;
	state?: SimulatorState;
	generator?: GeneratorState;
	/** Simulated seconds per rendered second (the bridge's --time-scale), for the relay's timer. */
	timeScale?: number;
}

/** Why the protection relay is open, or null when it is closed. */
export type RelayTrip = 'heat' | 'timer' | null;

/** The tones a generator setting produces (peak volts); noise is handled separately. */
export function generatorTones(g: GeneratorState): { frequencyHz: number; amplitudeV: number }[] {
	const peak = 'levelVrms' in g ? g.levelVrms * Math.SQRT2 : 0;
	switch (g.kind) {
		case 'sine':
			return [{ frequencyHz: g.frequencyHz, amplitudeV: peak }];
		case 'twin-tone':
			return [
				{ frequencyHz: g.f1Hz, amplitudeV: peak / 2 },
				{ frequencyHz: g.f2Hz, amplitudeV: peak / 2 }
			];
		case 'smpte':
			return [
				{ frequencyHz: g.lowHz, amplitudeV: (peak * g.ratio) / (g.ratio + 1) },
				{ frequencyHz: g.highHz, amplitudeV: peak / (g.ratio + 1) }
			];
		default:
			return [];
	}
}

/** Highest frequency a generator setting asks for (0 when off or noise). */
export function generatorMaxHz(g: GeneratorState): number {
	return Math.max(0, ...generatorTones(g).map((t) => t.frequencyHz));
}

function drivesSide(drive: Tone['drive'], side: number): boolean {
	return drive === 'both' || drive === SIDE_NAMES[side];
}

/**
 * Crosstalk from the other channel's input (complex, re that input): capacitive, −80 dB at 1 kHz
 * rising 6 dB/octave, −100 dB floor. Exported so crosstalk tests read what is injected.
 */
export function crosstalk(frequencyHz: number): [number, number] {
	return [1e-5, 1e-4 * (frequencyHz / 1000)];
}

export class Simulator {
	readonly sampleRateHz: number;
	readonly channels: number;
	readonly seed: number;
	readonly fullScaleVolts = SIM_FULL_SCALE_VOLTS;
	readonly timeScale: number;
	private st: SimulatorState;
	private gen: GeneratorState;
	private dirty = true;

	private tones: Tone[] = [];
	/** coef[side][k] = [re, im] so that output = Im(coef · e^{j2πφ}). */
	private coefs: [number, number][][] = [[], []];
	private eq: Biquad[][] = [[], []];
	private hp: Biquad = IDENTITY;
	private lp: Biquad = IDENTITY;
	private gainVol = 1;
	private noisePath = false;

	// Time-domain noise path, per side.
	private eqStates: BiquadState[][] = [[], []];
	private hpStates = [new BiquadState(IDENTITY), new BiquadState(IDENTITY)];
	private lpStates = [new BiquadState(IDENTITY), new BiquadState(IDENTITY)];
	private phonoStates: BiquadState[];
	private readonly pinkState = new Float64Array(7);
	private readonly pinkNorm: number;

	// Output stage, per side.
	private clipPos = [39, 39];
	private clipNeg = [39, 39];
	private swing = 39;
	private crossoverDepthV = CROSSOVER_DEPTH_MIN_V;
	private outNoiseSigma = [0, 0];
	private inNoiseSigma = [0, 0];
	private dcV = [0, 0];

	// Hum: per harmonic, starting phase and per-side amplitude; one tabulated mains cycle.
	private humPhase: number[] = [];
	private humAmp: number[][] = [[], []];
	private humKey = '';
	private humTables: { odd: Float64Array; even: Float64Array }[] | null = null;
	private humPos = 0;
	private lastMeanAbsCurrentA = [0, 0];

	// Phono stage overload: tones made at the phono stage's output (per side) when it clips.
	private phonoCoefs: [number, number][][] = [[], []];
	private phonoClipTones = false;
	private readonly phonoTone: Float64Array[];

	// Protection relay.
	private relayTrip: RelayTrip = null;
	private relayElapsedS = 0;
	private heatsinkC = [-Infinity, -Infinity];

	// Faults with time behaviour.
	private scratchDb = [0, 0];
	private crackleEnv = [0, 0];
	private readonly crackleDecay: number;

	private readonly rngNoise: Rng;
	private readonly rngGen: Rng;
	private readonly rngFault: Rng;

	private readonly pre: Float64Array[];
	private readonly work: Float64Array[];
	private readonly genBuf: Float64Array;
	private readonly humBuf: Float64Array[];
	private readonly crackleBuf = new Float64Array(SEGMENT);

	constructor(opts: SimulatorOptions) {
		this.sampleRateHz = opts.sampleRateHz;
		this.channels = opts.channels;
		this.seed = opts.seed >>> 0;
		this.timeScale = opts.timeScale ?? 1;
		this.st = structuredClone(opts.state ?? DEFAULT_SIMULATOR_STATE);
		this.gen = structuredClone(opts.generator ?? GENERATOR_OFF);
		const root = new Rng(this.seed);
		const rngHum = root.fork(1);
		this.rngNoise = root.fork(2);
		this.rngGen = root.fork(3);
		this.rngFault = root.fork(4);
		this.humPhase = HUM_PEAK_V.map(() => rngHum.uniform());
		this.pre = [new Float64Array(SEGMENT), new Float64Array(SEGMENT)];
		this.work = [new Float64Array(SEGMENT), new Float64Array(SEGMENT)];
		this.humBuf = [new Float64Array(SEGMENT), new Float64Array(SEGMENT)];
		this.genBuf = new Float64Array(SEGMENT);
		this.phonoTone = [new Float64Array(SEGMENT), new Float64Array(SEGMENT)];
		const phono = riaaPlaybackBiquad(this.sampleRateHz, 10 ** (PHONO_GAIN_1KHZ_DB / 20));
		this.phonoStates = [new BiquadState(phono), new BiquadState(phono)];
		this.pinkNorm = 1 / pinkRmsGain();
		this.crackleDecay = Math.exp(-1 / (0.0015 * this.sampleRateHz));
		this.setGenerator(this.gen);
	}

	get state(): SimulatorState {
		return structuredClone(this.st);
	}
	get generator(): GeneratorState {
		return structuredClone(this.gen);
	}

	setState(next: SimulatorState): void {
		const wasOn = this.st.faults.protectionRelay.enabled;
		this.st = structuredClone(next);
		if (!next.faults.protectionRelay.enabled || !wasOn) {
			// Switching the fault off closes the relay; switching it on starts its timer afresh.
			this.relayTrip = null;
			this.relayElapsedS = 0;
		}
		this.dirty = true;
	}

	/** The heatsink temperatures the protection relay watches (the bridge feeds its thermal model in). */
	setHeatsinkCelsius(left: number, right: number): void {
		this.heatsinkC[0] = left;
		this.heatsinkC[1] = right;
	}

	/** Why the protection relay is open now (null: closed, the output reaches the load). */
	get relayOpen(): RelayTrip {
		return this.relayTrip;
	}

	setGenerator(next: GeneratorState): void {
		this.gen = structuredClone(next);
		const drive = 'drive' in next && next.drive ? next.drive : 'both';
		this.tones = generatorTones(next)
			.filter((t) => t.frequencyHz < this.sampleRateHz / 2)
			.map((t) => ({ ...t, drive, phaseCycles: 0 }));
		this.dirty = true;
	}

	/** Bias as a fraction of correct, including the under-bias fault. */
	effectiveBias(): number {
		return (this.st.biasPercent / 100) * (this.st.faults.underBias ? UNDER_BIAS_FRACTION : 1);
	}

	/** What the thermal model needs to know about the output stage now. */
	amplifierParams(): AmplifierParams {
		return {
			railVolts: this.st.railVolts,
			loadOhms: this.st.loadOhms,
			idleCurrentA: NOMINAL_IDLE_CURRENT_A * this.effectiveBias()
		};
	}

	/** Complex gain from a side's input to that side's load (line-equivalent), without crosstalk. */
	responseAt(frequencyHz: number, side = 0): [number, number] {
		if (this.dirty) this.recompute();
		return this.linearResponse(frequencyHz, side);
	}

	private linearResponse(f: number, side: number): [number, number] {
		const fs = this.sampleRateHz;
		let h: [number, number] = [this.gainVol, 0];
		if (this.st.input === 'phono' && !this.st.inverseRiaaNetwork)
			h = cmul(h, riaaPlaybackComplex(f, 10 ** (PHONO_GAIN_1KHZ_DB / 20)));
		for (const q of this.eq[side]) if (!isIdentity(q)) h = cmul(h, biquadResponse(q, f, fs));
		if (!isIdentity(this.hp)) h = cmul(h, biquadResponse(this.hp, f, fs));
		if (!isIdentity(this.lp)) h = cmul(h, biquadResponse(this.lp, f, fs));
		// Input coupling capacitor (jf/fc)/(1 + jf/fc) and amplifier bandwidth 1/(1 + jf/fb).
		const x = f / INPUT_COUPLING_HZ;
		h = cmul(h, [(x * x) / (1 + x * x), x / (1 + x * x)]);
		const y = f / AMP_BANDWIDTH_HZ;
		h = cmul(h, [1 / (1 + y * y), -y / (1 + y * y)]);
		return h;
	}

	private recompute(): void {
		const st = this.st;
		const fs = this.sampleRateHz;
		this.dirty = false;
		this.gainVol = 10 ** (st.volumeDb / 20);
		const scratch = st.faults.scratchyControl;
		for (let side = 0; side < 2; side++) {
			this.eq[side] = EQ_BAND_CENTRES_HZ.map((fc, b) => {
				const extra = scratch.enabled && b === scratch.band ? this.scratchDb[side] : 0;
				return peaking(fc, st.eqGainsDb[b] + extra, EQ_Q, fs);
			});
			const states = this.eqStates[side];
			this.eq[side].forEach((q, b) => {
				if (!states[b]) states[b] = new BiquadState(q);
				else states[b].q = q;
			});
		}
		this.hp = st.lowFilter.enabled ? highPass(st.lowFilter.frequencyHz, FILTER_Q, fs) : IDENTITY;
		this.lp = st.highFilter.enabled ? lowPass(st.highFilter.frequencyHz, FILTER_Q, fs) : IDENTITY;
		for (const s of this.hpStates) s.q = this.hp;
		for (const s of this.lpStates) s.q = this.lp;

		const sides = Math.min(2, this.channels);
		for (let side = 0; side < 2; side++) {
			this.coefs[side] = this.tones.map((t) => {
				const h = this.linearResponse(t.frequencyHz, side);
				let own: [number, number] = drivesSide(t.drive, side) ? [1, 0] : [0, 0];
				if (sides === 2 && drivesSide(t.drive, 1 - side)) {
					const xt = crosstalk(t.frequencyHz);
					own = [own[0] + xt[0], own[1] + xt[1]];
				}
				const c = cmul(h, own);
				return [c[0] * t.amplitudeV, c[1] * t.amplitudeV] as [number, number];
			});
		}

		// The phono stage's own output: tones through the inverse network and the playback curve
		// (flat, unity) or straight into the playback curve. Above its swing it clips.
		this.phonoClipTones = false;
		if (st.input === 'phono') {
			const phonoGain = 10 ** (PHONO_GAIN_1KHZ_DB / 20);
			for (let side = 0; side < 2; side++) {
				let peak = 0;
				this.phonoCoefs[side] = this.tones.map((t) => {
					const h: [number, number] = st.inverseRiaaNetwork
						? [1, 0]
						: riaaPlaybackComplex(t.frequencyHz, phonoGain);
					let own: [number, number] = drivesSide(t.drive, side) ? [1, 0] : [0, 0];
					if (sides === 2 && drivesSide(t.drive, 1 - side)) {
						const xt = crosstalk(t.frequencyHz);
						own = [own[0] + xt[0], own[1] + xt[1]];
					}
					const c = cmul(h, own);
					peak += Math.hypot(c[0], c[1]) * t.amplitudeV;
					return [c[0] * t.amplitudeV, c[1] * t.amplitudeV] as [number, number];
				});
				if (peak > CLIP_KNEE * PHONO_STAGE_CLIP_V) this.phonoClipTones = true;
			}
		}

		this.swing = st.railVolts - OUTPUT_HEADROOM_V;
		for (let side = 0; side < 2; side++) {
			// A weak device is current-limited: its half clips at I_max·R (never above the rails).
			const weak = st.faults.weakOutputDevice === SIDE_NAMES[side];
			this.clipPos[side] = weak ? Math.min(this.swing, WEAK_DEVICE_MAX_CURRENT_A * st.loadOhms) : this.swing;
			this.clipNeg[side] = this.swing;
			this.dcV[side] = st.faults.dcOffset && side === 0 ? st.faults.dcOffsetMv / 1000 : 0;
		}
		const bias = this.effectiveBias();
		this.crossoverDepthV = CROSSOVER_DEPTH_MIN_V + CROSSOVER_DEPTH_ZERO_BIAS_V * Math.max(0, 1 - bias) ** 1.5;

		const eqFlat = this.eq.every((bands) => bands.every(isIdentity));
		this.noisePath =
			this.gen.kind === 'noise' ||
			st.input === 'phono' ||
			st.faults.noisySelector !== null ||
			(scratch.enabled && scratch.moving) ||
			!eqFlat ||
			st.lowFilter.enabled ||
			st.highFilter.enabled;
		const rootBw = Math.sqrt(fs / 2);
		for (let side = 0; side < 2; side++) {
			const selector = st.faults.noisySelector === SIDE_NAMES[side] ? NOISY_SELECTOR_FACTOR : 1;
			const inDensity = (st.input === 'phono' ? PHONO_NOISE_V_PER_RTHZ : LINE_NOISE_V_PER_RTHZ) * selector;
			if (this.noisePath) {
				this.inNoiseSigma[side] = inDensity * rootBw;
				this.outNoiseSigma[side] = OUTPUT_NOISE_V_PER_RTHZ * rootBw;
			} else {
				// A flat chain is a plain gain: fold the input noise into the output noise.
				this.inNoiseSigma[side] = 0;
				this.outNoiseSigma[side] =
					Math.hypot(OUTPUT_NOISE_V_PER_RTHZ, LINE_NOISE_V_PER_RTHZ * this.gainVol) * rootBw;
			}
		}
		this.updateHum();
	}

	private updateHum(): void {
		const st = this.st;
		const key = `${st.mainsHz}|${st.input}|${st.faults.tiredFilterCap}`;
		if (key === this.humKey) return;
		this.humKey = key;
		for (let side = 0; side < 2; side++) {
			const sideFactor = side === 0 ? 1 : 0.8;
			this.humAmp[side] = HUM_PEAK_V.map((a, i) => {
				const order = i + 1;
				let amp = a * sideFactor;
				if (st.input === 'phono' && order % 2 === 1) amp *= PHONO_HUM_FACTOR;
				if (st.faults.tiredFilterCap) amp *= order % 2 === 0 ? TIRED_CAP_EVEN_FACTOR : TIRED_CAP_ODD_FACTOR;
				return amp;
			});
		}
		// With a whole number of samples per mains cycle (every common rate), one cycle of hum
		// is tabulated (odd and even orders apart, so ripple can follow the load current).
		const period = this.sampleRateHz / st.mainsHz;
		if (Number.isInteger(period)) {
			this.humTables = [0, 1].map((side) => {
				const odd = new Float64Array(period);
				const even = new Float64Array(period);
				this.humAmp[side].forEach((amp, i) => {
					const order = i + 1;
					if (order * st.mainsHz >= this.sampleRateHz / 2) return;
					const t = order % 2 === 0 ? even : odd;
					for (let j = 0; j < period; j++)
						t[j] += amp * Math.sin(2 * Math.PI * (this.humPhase[i] + (order * j) / period));
				});
				return { odd, even };
			});
			this.humPos %= period;
		} else {
			this.humTables = null;
		}
	}

	/**
	 * Render `n` samples per channel, interleaved, into `out` (sample = volts / full scale).
	 */
	render(out: Float32Array, n: number): void {
		if (out.length < n * this.channels) throw new RangeError('output buffer too small');
		for (let pos = 0; pos < n; pos += SEGMENT) {
			const m = Math.min(SEGMENT, n - pos);
			this.segmentFaults(m);
			if (this.dirty) this.recompute();
			this.renderSegment(out, pos, m);
		}
	}

	/** Scratchy-control jumps, selector crackles and the protection relay, decided once per segment. */
	private segmentFaults(m: number): void {
		const f = this.st.faults;
		const segS = m / this.sampleRateHz;
		const relay = f.protectionRelay;
		if (relay.enabled) {
			this.relayElapsedS += segS * this.timeScale;
			const hottestC = Math.max(this.heatsinkC[0], this.heatsinkC[1]);
			if (this.relayTrip === null) {
				if (hottestC >= relay.tripCelsius) this.relayTrip = 'heat';
				else if (relay.tripAfterS !== null && this.relayElapsedS >= relay.tripAfterS)
					this.relayTrip = 'timer';
			} else if (this.relayTrip === 'heat' && hottestC < relay.tripCelsius - RELAY_RESET_HYSTERESIS_C) {
				this.relayTrip = null;
			}
		}
		const scratch = f.scratchyControl;
		if (scratch.enabled && scratch.moving) {
			// A worn track: the wiper loses contact for a few ms every ~20 ms of travel.
			for (let side = 0; side < 2; side++) {
				if (this.rngFault.uniform() < segS / 0.02) {
					const r = this.rngFault.uniform();
					this.scratchDb[side] = r < 0.35 ? 0 : -12 * this.rngFault.uniform() + 1.5 * this.rngFault.uniform();
					this.crackleEnv[side] += 3e-4 * (0.3 + this.rngFault.uniform());
					this.dirty = true;
				}
			}
		} else if (this.scratchDb[0] !== 0 || this.scratchDb[1] !== 0) {
			this.scratchDb[0] = 0;
			this.scratchDb[1] = 0;
			this.dirty = true;
		}
		for (let side = 0; side < 2; side++) {
			if (f.noisySelector === SIDE_NAMES[side] && this.rngFault.uniform() < segS * 4)
				this.crackleEnv[side] += 5e-4 * (0.2 + this.rngFault.uniform());
		}
	}

	private renderSegment(out: Float32Array, pos: number, m: number): void {
		const fs = this.sampleRateHz;
		const chs = this.channels;
		const sides = Math.min(2, chs);
		const pre0 = this.pre[0];
		const pre1 = this.pre[1];
		pre0.fill(0, 0, m);
		pre1.fill(0, 0, m);

		// Tones through the linear chain (exact complex response), two sides at once; or, while
		// the phono stage clips, to the phono stage's output (the rest runs in noiseSegment).
		const toPhono = this.phonoClipTones;
		const out0 = toPhono ? this.phonoTone[0] : pre0;
		const out1 = toPhono ? this.phonoTone[1] : pre1;
		if (toPhono) {
			out0.fill(0, 0, m);
			out1.fill(0, 0, m);
		}
		const coefs = toPhono ? this.phonoCoefs : this.coefs;
		for (let k = 0; k < this.tones.length; k++) {
			const t = this.tones[k];
			const c0 = coefs[0][k];
			const c1 = coefs[1][k];
			const w = (2 * Math.PI * t.frequencyHz) / fs;
			const cw = Math.cos(w);
			const sw = Math.sin(w);
			let zr = Math.cos(2 * Math.PI * t.phaseCycles);
			let zi = Math.sin(2 * Math.PI * t.phaseCycles);
			const a0 = c0[0];
			const b0 = c0[1];
			const a1 = c1[0];
			const b1 = c1[1];
			for (let i = 0; i < m; i++) {
				out0[i] += a0 * zi + b0 * zr;
				out1[i] += a1 * zi + b1 * zr;
				const nr = zr * cw - zi * sw;
				zi = zi * cw + zr * sw;
				zr = nr;
			}
			t.phaseCycles = (t.phaseCycles + (m * t.frequencyHz) / fs) % 1;
		}

		if (this.noisePath) this.noiseSegment(m, sides);

		// Hum (added after the output stage). Ripple (even orders) rises with the current drawn
		// when the reservoir capacitor is tired.
		const tired = this.st.faults.tiredFilterCap;
		const evenScale = [0, 1].map((side) => (tired ? 1 + 0.5 * this.lastMeanAbsCurrentA[side] : 1));
		const hum0 = this.humBuf[0];
		const hum1 = this.humBuf[1];
		if (this.humTables) {
			const { odd: o0, even: e0 } = this.humTables[0];
			const { odd: o1, even: e1 } = this.humTables[1];
			const period = o0.length;
			const k0 = evenScale[0];
			const k1 = evenScale[1];
			let p = this.humPos;
			for (let i = 0; i < m; i++) {
				hum0[i] = o0[p] + k0 * e0[p];
				hum1[i] = o1[p] + k1 * e1[p];
				if (++p === period) p = 0;
			}
			this.humPos = p;
		} else {
			hum0.fill(0, 0, m);
			hum1.fill(0, 0, m);
			const mainsHz = this.st.mainsHz;
			for (let h = 0; h < this.humPhase.length; h++) {
				const f = mainsHz * (h + 1);
				if (f >= fs / 2) break;
				const w = (2 * Math.PI * f) / fs;
				const cw = Math.cos(w);
				const sw = Math.sin(w);
				const phase = this.humPhase[h] + (this.humPos * f) / fs;
				let zr = Math.cos(2 * Math.PI * phase);
				let zi = Math.sin(2 * Math.PI * phase);
				const even = (h + 1) % 2 === 0;
				const g0 = this.humAmp[0][h] * (even ? evenScale[0] : 1);
				const g1 = this.humAmp[1][h] * (even ? evenScale[1] : 1);
				for (let i = 0; i < m; i++) {
					hum0[i] += g0 * zi;
					hum1[i] += g1 * zi;
					const nr = zr * cw - zi * sw;
					zi = zi * cw + zr * sw;
					zr = nr;
				}
			}
			// Samples since the hum phases' origin, wrapped at a whole number of mains cycles.
			this.humPos = (this.humPos + m) % (fs * 10);
		}

		const depth = this.crossoverDepthV;
		const invX = 1 / CROSSOVER_WIDTH_V;
		const invSwing = 1 / this.swing;
		const rng = this.rngNoise;
		const loadOhms = this.st.loadOhms;
		const relayOpen = this.relayTrip !== null;
		for (let side = 0; side < sides; side++) {
			const pre = this.pre[side];
			const hum = this.humBuf[side];
			const vp = this.clipPos[side];
			const vn = this.clipNeg[side];
			const kp = CLIP_KNEE * vp;
			const kn = CLIP_KNEE * vn;
			const sigma = this.outNoiseSigma[side];
			const dc = this.dcV[side];
			const work = this.work[side];
			if (relayOpen) {
				// The relay has cut the amplifier off the load: the analyzer reads only itself.
				rng.fillGaussian(work, m, ANALYZER_FLOOR_VRMS);
				this.lastMeanAbsCurrentA[side] = 0;
				this.writeSide(out, work, pos, m, side);
				continue;
			}
			// Output-stage noise first, so the loop below only adds to it.
			rng.fillGaussian(work, m, sigma);
			let sumAbs = 0;
			for (let i = 0; i < m; i++) {
				// The offset is part of what the output stage drives, so the rails bound it too.
				let v = pre[i] + dc;
				// Crossover: a small notch around zero, deeper as the bias falls.
				let x = v * invX;
				if (x > 3) x = 1;
				else if (x < -3) x = -1;
				else x = (x * (27 + x * x)) / (27 + 9 * x * x);
				v -= depth * x;
				// Gentle curvature of the output devices (2nd and 3rd order).
				const r = v * invSwing;
				v += this.swing * (CURVE_A2 * r * r + CURVE_A3 * r * r * r);
				// Soft clipping just below the rails.
				if (v > kp)
					v = vp * (CLIP_KNEE + (1 - CLIP_KNEE) * Math.tanh((v / vp - CLIP_KNEE) / (1 - CLIP_KNEE)));
				else if (v < -kn)
					v = -vn * (CLIP_KNEE + (1 - CLIP_KNEE) * Math.tanh((-v / vn - CLIP_KNEE) / (1 - CLIP_KNEE)));
				sumAbs += v < 0 ? -v : v;
				work[i] += v + hum[i];
			}
			this.lastMeanAbsCurrentA[side] = sumAbs / m / loadOhms;
			this.writeSide(out, work, pos, m, side);
		}
	}

	/** Copy one side's volts into every interleaved channel it feeds, as samples. */
	private writeSide(out: Float32Array, work: Float64Array, pos: number, m: number, side: number): void {
		const chs = this.channels;
		const inv = 1 / this.fullScaleVolts;
		for (let c = side; c < chs; c += 2) {
			let o = pos * chs + c;
			for (let i = 0; i < m; i++, o += chs) out[o] = work[i] * inv;
		}
	}

	/** Generator noise, input-referred noise and crackle through the time-domain chain. */
	private noiseSegment(m: number, sides: number): void {
		const g = this.genBuf;
		const gen = this.gen;
		if (gen.kind === 'noise') {
			const sigma = gen.levelVrms;
			const rng = this.rngGen;
			if (gen.color === 'pink') {
				const p = this.pinkState;
				const k = sigma * this.pinkNorm;
				rng.fillGaussian(g, m, 1);
				for (let i = 0; i < m; i++) {
					const wv = g[i];
					// Pink filter after P. Kellet (public-domain approximation, ±0.05 dB above 9 Hz at 44.1 kHz).
					p[0] = 0.99886 * p[0] + wv * 0.0555179;
					p[1] = 0.99332 * p[1] + wv * 0.0750759;
					p[2] = 0.969 * p[2] + wv * 0.153852;
					p[3] = 0.8665 * p[3] + wv * 0.3104856;
					p[4] = 0.55 * p[4] + wv * 0.5329522;
					p[5] = -0.7616 * p[5] - wv * 0.016898;
					g[i] = k * (p[0] + p[1] + p[2] + p[3] + p[4] + p[5] + p[6] + wv * 0.5362);
					p[6] = wv * 0.115926;
				}
			} else {
				rng.fillGaussian(g, m, sigma);
			}
		} else {
			g.fill(0, 0, m);
		}
		const drive = 'drive' in gen && gen.drive ? gen.drive : 'both';
		const phono = this.st.input === 'phono';
		const network = this.st.inverseRiaaNetwork;
		const rng = this.rngNoise;
		const gv = this.gainVol;
		const x0 = this.work[0];
		const x1 = this.work[1];
		for (let side = 0; side < sides; side++) {
			const x = this.work[side];
			const sigma = this.inNoiseSigma[side];
			let env = this.crackleEnv[side];
			const decay = this.crackleDecay;
			// Input-referred noise and crackle (already through the phono stage's input when phono).
			rng.fillGaussian(x, m, sigma);
			if (env > 0) {
				const burst = this.crackleBuf;
				this.rngFault.fillGaussian(burst, m, 1);
				for (let i = 0; i < m; i++) {
					x[i] += env * burst[i];
					env *= decay;
				}
			}
			this.crackleEnv[side] = env < 1e-9 ? 0 : env;
			// Without the inverse network the generator meets the playback curve itself.
			const dg = gen.kind === 'noise' && drivesSide(drive, side) ? 1 : 0;
			if (phono && !network && dg) for (let i = 0; i < m; i++) x[i] += g[i];
		}
		if (phono) {
			if (sides > 1) runBiquadPair(this.phonoStates[0], this.phonoStates[1], x0, x1, m);
			else this.phonoStates[0].run(x0, m);
		}
		for (let side = 0; side < sides; side++) {
			const x = this.work[side];
			// Generator through the inverse network then the playback curve is flat: add it after the stage.
			const dg = gen.kind === 'noise' && drivesSide(drive, side) && !(phono && !network) ? 1 : 0;
			if (phono) {
				if (dg) for (let i = 0; i < m; i++) x[i] += g[i];
				if (this.phonoClipTones) {
					const t = this.phonoTone[side];
					for (let i = 0; i < m; i++) x[i] += t[i];
				}
				// The phono stage's own swing: an input far above its overload point clips here,
				// whatever the volume after it.
				const vp = PHONO_STAGE_CLIP_V;
				const k = CLIP_KNEE * vp;
				for (let i = 0; i < m; i++) {
					const v = x[i];
					if (v > k)
						x[i] = vp * (CLIP_KNEE + (1 - CLIP_KNEE) * Math.tanh((v / vp - CLIP_KNEE) / (1 - CLIP_KNEE)));
					else if (v < -k)
						x[i] = -vp * (CLIP_KNEE + (1 - CLIP_KNEE) * Math.tanh((-v / vp - CLIP_KNEE) / (1 - CLIP_KNEE)));
					x[i] *= gv;
				}
			} else if (dg) for (let i = 0; i < m; i++) x[i] = gv * (x[i] + g[i]);
			else for (let i = 0; i < m; i++) x[i] *= gv;
		}
		// Volume is done; EQ and filters run both sides in one loop (independent recursions overlap).
		const stages: [BiquadState, BiquadState][] = [];
		for (let b = 0; b < this.eqStates[0].length; b++) stages.push([this.eqStates[0][b], this.eqStates[1][b]]);
		stages.push([this.hpStates[0], this.hpStates[1]], [this.lpStates[0], this.lpStates[1]]);
		for (const [a, b] of stages) {
			const runA = !isIdentity(a.q);
			const runB = sides > 1 && !isIdentity(b.q);
			if (runA && runB) runBiquadPair(a, b, x0, x1, m);
			else if (runA) a.run(x0, m);
			else if (runB) b.run(x1, m);
		}
		for (let side = 0; side < sides; side++) {
			const x = this.work[side];
			const pre = this.pre[side];
			for (let i = 0; i < m; i++) pre[i] += x[i];
		}
	}
}

/** rms gain of the pink filter for unit white input, from its impulse response energy. */
function pinkRmsGain(): number {
	const p = new Float64Array(7);
	let energy = 0;
	for (let i = 0; i < 200_000; i++) {
		const wv = i === 0 ? 1 : 0;
		p[0] = 0.99886 * p[0] + wv * 0.0555179;
		p[1] = 0.99332 * p[1] + wv * 0.0750759;
		p[2] = 0.969 * p[2] + wv * 0.153852;
		p[3] = 0.8665 * p[3] + wv * 0.3104856;
		p[4] = 0.55 * p[4] + wv * 0.5329522;
		p[5] = -0.7616 * p[5] - wv * 0.016898;
		const y = p[0] + p[1] + p[2] + p[3] + p[4] + p[5] + p[6] + wv * 0.5362;
		p[6] = wv * 0.115926;
		energy += y * y;
	}
	return Math.sqrt(energy);
}
