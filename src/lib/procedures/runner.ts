// Running a procedure on the bench: set the generator, let the unit and the analysis settle, read
// the live analysis, step on. The bench supplies the I/O (bridge and live analysis); the steps and
// the ramp's decisions come from this library, so a test drives the same code with a fake unit.
import type { SweepStep } from './sweep';
import {
	cancelRamp,
	startRamp,
	stepRamp,
	type RampPlan,
	type RampReading,
	type RampState
} from './max-power';

/** What one live analysis result says per stream channel (0 = left, 1 = right). */
export interface LiveReading {
	frequencyHz: (number | null)[];
	levelVrms: (number | null)[];
	thdnPercent: (number | null)[];
}

export interface ProcedureIO {
	/** Drive the unit with a sine at this frequency and level, or turn the generator off (null). */
	setGenerator(g: { frequencyHz: number; levelVrms: number } | null): void;
	/** The first analysis computed from audio received at or after `atMs` (the clock of `now`). */
	readAfter(atMs: number, signal: AbortSignal): Promise<LiveReading>;
	now(): number;
	sleep(ms: number, signal: AbortSignal): Promise<void>;
}

export class ProcedureCancelled extends Error {
	constructor() {
		super('Cancelled: the generator is off');
	}
}

function check(signal: AbortSignal): void {
	if (signal.aborted) throw new ProcedureCancelled();
}

/** Read until the analysis has locked onto `frequencyHz` (within 3 %) or `tries` results passed. */
async function readAt(io: ProcedureIO, atMs: number, frequencyHz: number, signal: AbortSignal, tries = 4) {
	let last: LiveReading | null = null;
	let after = atMs;
	for (let k = 0; k < tries; k++) {
		check(signal);
		last = await io.readAfter(after, signal);
		const locked = last.frequencyHz.some((f) => f !== null && Math.abs(f / frequencyHz - 1) < 0.03);
		if (locked) return last;
		after = io.now();
	}
	return last;
}

export interface SweepPlan {
	frequenciesHz: readonly number[];
	levelVrms: number;
	settleMs: number;
	channels: number;
}

/** A stepped-sine sweep; always ends with the generator off, also on cancel or error. */
export async function runSweep(
	io: ProcedureIO,
	plan: SweepPlan,
	signal: AbortSignal,
	onStep: (done: number, step: SweepStep) => void
): Promise<SweepStep[]> {
	const steps: SweepStep[] = [];
	try {
		for (const f of plan.frequenciesHz) {
			check(signal);
			io.setGenerator({ frequencyHz: f, levelVrms: plan.levelVrms });
			const at = io.now() + plan.settleMs;
			await io.sleep(plan.settleMs, signal);
			const r = await readAt(io, at, f, signal);
			const step: SweepStep = {
				frequencyHz: f,
				levelVrms: Array.from({ length: plan.channels }, (_, ch) => r?.levelVrms[ch] ?? null)
			};
			steps.push(step);
			onStep(steps.length, step);
		}
		return steps;
	} finally {
		io.setGenerator(null);
	}
}

/** The guarded power ramp; always ends with the generator off (the state machine's last word is 0). */
export async function runRamp(
	io: ProcedureIO,
	plan: RampPlan,
	settleMs: number,
	signal: AbortSignal,
	onStep: (state: RampState, reading: RampReading) => void
): Promise<{ state: RampState; readings: RampReading[]; cancelled: boolean }> {
	const started = startRamp(plan);
	const { state } = started;
	let action = started.action;
	const readings: RampReading[] = [];
	let cancelled = false;
	try {
		while (action.kind === 'set-level') {
			check(signal);
			const level = action.levelVrms;
			io.setGenerator({ frequencyHz: plan.frequencyHz, levelVrms: level });
			const at = io.now() + settleMs;
			await io.sleep(settleMs, signal);
			const r = await readAt(io, at, plan.frequencyHz, signal);
			const reading: RampReading = {
				levelVrms: level,
				outputVrms: Array.from({ length: plan.channels }, (_, ch) => r?.levelVrms[ch] ?? null),
				thdnPercent: Array.from({ length: plan.channels }, (_, ch) => r?.thdnPercent[ch] ?? null)
			};
			readings.push(reading);
			action = stepRamp(state, reading);
			onStep(state, reading);
		}
	} catch (e) {
		if (!(e instanceof ProcedureCancelled)) throw e;
		cancelled = true;
		cancelRamp(state);
	} finally {
		io.setGenerator(null);
	}
	return { state, readings, cancelled };
}
