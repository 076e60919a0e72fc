// Demo captures for the seed: rendered by the bridge's own simulator (hum, noise, output-stage
// curvature, the faults) rather than a bare sine, so seeded snapshots read like bench captures.
import { Simulator, SIM_FULL_SCALE_VOLTS } from '../bridge/sim/simulator';
import {
	applySimPatch,
	DEFAULT_SIMULATOR_STATE,
	type SimMessage,
	type SimulatorState
} from '../src/lib/bridge/protocol';
import { encodeWav } from '../src/lib/dsp/wav';

export interface DemoCaptureOptions {
	/** A simulator patch: faults, volume, load … (the defaults are a healthy unit into 8 Ω). */
	sim?: Omit<SimMessage, 'v' | 'id' | 'type'>;
	/** Sine at this frequency and generator level (V rms), or no stimulus. */
	tone?: { frequencyHz: number; levelVrms: number } | null;
	/** Seconds kept (after a settling second that is thrown away). */
	seconds?: number;
	seed?: number;
}

export interface DemoCapture {
	wav: Uint8Array;
	/** Upload meta the bench would send with it. */
	meta: {
		fullScaleVolts: number;
		loadOhms: number;
		referenceVrms?: number;
		stimulus: 'tone' | 'none';
		dcCoupled: true;
	};
}

export function demoCapture(opts: DemoCaptureOptions = {}): DemoCapture {
	const rateHz = 48_000;
	const state: SimulatorState = opts.sim
		? applySimPatch(DEFAULT_SIMULATOR_STATE, opts.sim)
		: DEFAULT_SIMULATOR_STATE;
	const tone = opts.tone === undefined ? { frequencyHz: 1000, levelVrms: 0.2 } : opts.tone;
	const sim = new Simulator({
		sampleRateHz: rateHz,
		channels: 2,
		seed: opts.seed ?? 11,
		state,
		generator: tone
			? { kind: 'sine', frequencyHz: tone.frequencyHz, levelVrms: tone.levelVrms }
			: { kind: 'off' }
	});
	// Let the filters and the hum settle, then keep what the analyzer would have captured.
	const settle = new Float32Array(rateHz * 2);
	sim.render(settle, rateHz);
	const n = Math.round((opts.seconds ?? 2) * rateHz);
	const interleaved = new Float32Array(n * 2);
	sim.render(interleaved, n);
	const left = new Float32Array(n);
	const right = new Float32Array(n);
	for (let i = 0; i < n; i++) {
		left[i] = interleaved[2 * i];
		right[i] = interleaved[2 * i + 1];
	}
	return {
		wav: encodeWav([left, right], rateHz),
		meta: {
			fullScaleVolts: SIM_FULL_SCALE_VOLTS,
			loadOhms: state.loadOhms,
			...(tone ? { referenceVrms: tone.levelVrms } : {}),
			stimulus: tone ? 'tone' : 'none',
			dcCoupled: true
		}
	};
}
