// Maximum power at a distortion threshold: a guarded ramp of the generator level, one step at a
// time, as a pure state machine. The bench feeds it each step's reading and does what it says;
// it always ends by asking for the generator at zero. Power is V²/R into the stated load.

export const THD_THRESHOLDS_PERCENT = [0.1, 0.5, 1] as const;
export const MAX_POWER_FREQUENCIES_HZ = [20, 1000, 20_000] as const;

export interface RampPlan {
	frequencyHz: number;
	loadOhms: number;
	thresholdPercent: number;
	/** First generator level and the step up, in dB. */
	startLevelVrms: number;
	stepDb: number;
	/** Never drive the generator above this (V rms). */
	maxLevelVrms: number;
	/** Stop after this many steps whatever happens. */
	maxSteps: number;
	/** The job's rated power per channel (W): an output above twice it stops the ramp. */
	ratedPowerW: number | null;
	channels: number;
}

/** What the bench read at one step: output V rms and THD+N % per channel. */
export interface RampReading {
	levelVrms: number;
	outputVrms: (number | null)[];
	thdnPercent: (number | null)[];
}

export type StopReason = 'threshold' | 'max-level' | 'max-steps' | 'over-rated' | 'cancelled' | 'no-signal';

export interface ChannelCrossing {
	/** Output at the crossing, interpolated between the last step below and the first above. */
	outputVrms: number;
	powerW: number;
}

export interface RampState {
	plan: RampPlan;
	steps: RampReading[];
	done: boolean;
	reason: StopReason | null;
	/** Per channel: the crossing, or null if the threshold was not reached. */
	crossings: (ChannelCrossing | null)[];
}

export type RampAction =
	{ kind: 'set-level'; levelVrms: number } | { kind: 'stop'; levelVrms: 0; reason: StopReason };

export function startRamp(plan: RampPlan): { state: RampState; action: RampAction } {
	if (!(plan.loadOhms > 0) || !(plan.startLevelVrms > 0) || !(plan.stepDb > 0))
		throw new RangeError('the ramp needs a load, a start level and a step above zero');
	const state: RampState = {
		plan,
		steps: [],
		done: false,
		reason: null,
		crossings: Array.from({ length: plan.channels }, () => null)
	};
	return {
		state,
		action: { kind: 'set-level', levelVrms: Math.min(plan.startLevelVrms, plan.maxLevelVrms) }
	};
}

export const wattsInto = (vrms: number, loadOhms: number): number => (vrms * vrms) / loadOhms;

/**
 * Linear interpolation of the output voltage at which THD+N reaches the threshold, between the
 * step below (v0, d0) and the step at or above (v1, d1).
 */
export function interpolateCrossing(
	v0: number,
	d0: number,
	v1: number,
	d1: number,
	threshold: number
): number {
	if (d1 === d0) return v1;
	const f = (threshold - d0) / (d1 - d0);
	return v0 + Math.min(1, Math.max(0, f)) * (v1 - v0);
}

function stop(state: RampState, reason: StopReason): RampAction {
	state.done = true;
	state.reason = reason;
	return { kind: 'stop', levelVrms: 0, reason };
}

/** Fold in the reading at the level last asked for; answers the next level or the stop. */
export function stepRamp(state: RampState, reading: RampReading): RampAction {
	if (state.done) return { kind: 'stop', levelVrms: 0, reason: state.reason ?? 'cancelled' };
	const { plan } = state;
	const prev = state.steps.at(-1);
	state.steps.push(reading);
	const outputs = reading.outputVrms;
	if (outputs.every((v) => v == null || !(v > 0))) return stop(state, 'no-signal');
	// Guard first: twice the rating is never a measurement worth taking.
	const rated = plan.ratedPowerW;
	if (rated !== null && outputs.some((v) => v != null && wattsInto(v, plan.loadOhms) > 2 * rated))
		return stop(state, 'over-rated');
	let allCrossed = true;
	for (let ch = 0; ch < plan.channels; ch++) {
		if (state.crossings[ch]) continue;
		const d1 = reading.thdnPercent[ch];
		const v1 = outputs[ch];
		if (d1 != null && v1 != null && d1 >= plan.thresholdPercent) {
			const d0 = prev?.thdnPercent[ch];
			const v0 = prev?.outputVrms[ch];
			const v = d0 != null && v0 != null ? interpolateCrossing(v0, d0, v1, d1, plan.thresholdPercent) : v1;
			state.crossings[ch] = { outputVrms: v, powerW: wattsInto(v, plan.loadOhms) };
		} else allCrossed = false;
	}
	if (allCrossed) return stop(state, 'threshold');
	if (state.steps.length >= plan.maxSteps) return stop(state, 'max-steps');
	const next = reading.levelVrms * 10 ** (plan.stepDb / 20);
	if (next > plan.maxLevelVrms * (1 + 1e-9)) return stop(state, 'max-level');
	return { kind: 'set-level', levelVrms: next };
}

/** The technician's cancel: the ramp ends and the generator goes to zero. */
export function cancelRamp(state: RampState): RampAction {
	return stop(state, 'cancelled');
}

/** Replay a saved ramp from its readings (the server recomputes the crossings and the reason). */
export function replayRamp(plan: RampPlan, readings: readonly RampReading[], cancelled = false): RampState {
	const { state } = startRamp(plan);
	for (const r of readings) {
		if (state.done) break;
		stepRamp(state, r);
	}
	if (!state.done) {
		state.done = true;
		state.reason = cancelled ? 'cancelled' : 'max-steps';
	}
	return state;
}
