// Running a procedure on the bench: set the generator, let the unit and the analysis settle, read
// the live analysis, step on. The bench supplies the I/O (bridge and live analysis); the steps and
// the ramp's decisions come from this library, so a test drives the same code with a fake unit.
import type { SweepStep } from './sweep';
import type { ImdResult } from '$lib/dsp/imd';
import type { GeneratorState } from '$lib/bridge/protocol';
import { crosstalkChannels, type CrosstalkDirection, type CrosstalkStep } from './crosstalk';
import { IMD_TONES, type ImdChannelReading, type ImdMethod } from './imd';
import { levelForPower, type MeterStep } from './meter';
import { wattsInto } from './max-power';
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
	/** With one channel driven: the leak at the driven frequency re the driven level, dB. */
	crosstalkDb?: number | null;
	/** Under a two-tone stimulus: each channel's IMD reading. */
	imd?: (ImdResult | null)[];
}

/** What a procedure asks of the generator: a sine (optionally into one channel) or a two-tone signal. */
export type ProcedureSignal =
	| { frequencyHz: number; levelVrms: number; drive?: 'both' | 'left' | 'right' }
	| { kind: 'smpte'; lowHz: number; highHz: number; ratio: number; levelVrms: number }
	| { kind: 'twin-tone'; f1Hz: number; f2Hz: number; levelVrms: number };

/** The bridge generator setting for a procedure's signal (null → off); a sine drives both sides unless told. */
export function generatorFor(g: ProcedureSignal | null): GeneratorState {
	if (!g) return { kind: 'off' };
	if ('kind' in g) return { ...g, drive: 'both' };
	return { kind: 'sine', frequencyHz: g.frequencyHz, levelVrms: g.levelVrms, drive: g.drive ?? 'both' };
}

export interface ProcedureIO {
	/** Drive the unit with a sine at this frequency and level, or turn the generator off (null). */
	setGenerator(g: ProcedureSignal | null): void;
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
			let r = await readAt(io, at, plan.frequencyHz, signal);
			// A window that still holds audio from before the level change reads as distortion (late
			// frames on a busy bench): a new crossing is confirmed on a later analysis before it counts.
			const crossesNow = (x: LiveReading | null) =>
				state.crossings.some((c, ch) => c === null && (x?.thdnPercent[ch] ?? -1) >= plan.thresholdPercent);
			if (crossesNow(r)) r = (await readAt(io, io.now() + 1, plan.frequencyHz, signal)) ?? r;
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

export interface CrosstalkPlan {
	steps: readonly { frequencyHz: number; direction: CrosstalkDirection }[];
	levelVrms: number;
	settleMs: number;
}

/** One channel driven at a time; reads until the leak is found. Always ends with the generator off. */
export async function runCrosstalk(
	io: ProcedureIO,
	plan: CrosstalkPlan,
	signal: AbortSignal,
	onStep: (done: number, step: CrosstalkStep) => void
): Promise<CrosstalkStep[]> {
	const out: CrosstalkStep[] = [];
	try {
		for (const s of plan.steps) {
			check(signal);
			const { driven } = crosstalkChannels(s.direction);
			io.setGenerator({
				frequencyHz: s.frequencyHz,
				levelVrms: plan.levelVrms,
				drive: driven === 0 ? 'left' : 'right'
			});
			let after = io.now() + plan.settleMs;
			await io.sleep(plan.settleMs, signal);
			let step: CrosstalkStep | null = null;
			for (let k = 0; k < 6 && !step; k++) {
				const r = await readAt(io, after, s.frequencyHz, signal);
				after = io.now();
				const v = r?.levelVrms[driven];
				const xt = r?.crosstalkDb;
				if (v != null && v > 0 && xt != null && Number.isFinite(xt))
					step = { ...s, drivenVrms: v, leakVrms: v * 10 ** (xt / 20) };
			}
			if (!step)
				throw new Error(
					`No crosstalk reading at ${s.frequencyHz} Hz (${s.direction}): is the unit passing the driven channel?`
				);
			out.push(step);
			onStep(out.length, step);
		}
		return out;
	} finally {
		io.setGenerator(null);
	}
}

export interface ImdPlan {
	methods: readonly ImdMethod[];
	levelVrms: number;
	settleMs: number;
	channels: number;
}

export interface ImdRun {
	method: ImdMethod;
	/** Per channel (null where no IMD could be read). */
	channels: (ImdChannelReading | null)[];
}

/** Each two-tone method in turn at one level; always ends with the generator off. */
export async function runImd(
	io: ProcedureIO,
	plan: ImdPlan,
	signal: AbortSignal,
	onStep: (done: number, run: ImdRun) => void
): Promise<ImdRun[]> {
	const out: ImdRun[] = [];
	try {
		for (const method of plan.methods) {
			check(signal);
			const t = IMD_TONES[method];
			io.setGenerator(
				method === 'smpte'
					? { kind: 'smpte', lowHz: t.f1Hz, highHz: t.f2Hz, ratio: t.ratio, levelVrms: plan.levelVrms }
					: { kind: 'twin-tone', f1Hz: t.f1Hz, f2Hz: t.f2Hz, levelVrms: plan.levelVrms }
			);
			let after = io.now() + plan.settleMs;
			await io.sleep(plan.settleMs, signal);
			let got: (ImdChannelReading | null)[] = [];
			for (let k = 0; k < 6; k++) {
				check(signal);
				const r = await io.readAfter(after, signal);
				after = io.now();
				got = Array.from({ length: plan.channels }, (_, ch) => {
					const m = r.imd?.[ch];
					return m && m.method === method
						? {
								tone1Vrms: m.level1Vrms,
								tone2Vrms: m.level2Vrms,
								productVrms: m.products.map((p) => p.levelVrms)
							}
						: null;
				});
				if (got.every(Boolean)) break;
			}
			const run = { method, channels: got };
			out.push(run);
			onStep(out.length, run);
		}
		return out;
	} finally {
		io.setGenerator(null);
	}
}

export interface MeterPlan {
	powersW: readonly number[];
	loadOhms: number;
	frequencyHz: number;
	/** A small first level to learn the unit's gain, V rms. */
	probeLevelVrms: number;
	/** Never drive the generator above this, V rms. */
	maxLevelVrms: number;
	/** Stream channel whose power the meter shows (0 = left, 1 = right). */
	channel: 0 | 1;
	settleMs: number;
	/** An output above twice this stops the run (null: no rating known). */
	ratedPowerW: number | null;
}

/**
 * The meter check: learn the gain at a probe level, then set each power in turn and wait for the
 * technician's reading (`ask` resolves with what the meter shows, W, or null). Ends off.
 */
export async function runMeter(
	io: ProcedureIO,
	plan: MeterPlan,
	signal: AbortSignal,
	ask: (step: { targetW: number; measuredW: number }, signal: AbortSignal) => Promise<number | null>,
	onStep: (done: number, step: MeterStep) => void
): Promise<MeterStep[]> {
	const out: MeterStep[] = [];
	const read = async (level: number) => {
		io.setGenerator({ frequencyHz: plan.frequencyHz, levelVrms: level });
		const at = io.now() + plan.settleMs;
		await io.sleep(plan.settleMs, signal);
		const r = await readAt(io, at, plan.frequencyHz, signal);
		const v = r?.levelVrms[plan.channel];
		if (v == null || !(v > 0))
			throw new Error(`No output on the metered channel at ${level.toFixed(3)} V in.`);
		return v;
	};
	try {
		let gain = (await read(plan.probeLevelVrms)) / plan.probeLevelVrms;
		for (const targetW of plan.powersW) {
			check(signal);
			const level = levelForPower(targetW, plan.loadOhms, gain);
			if (level > plan.maxLevelVrms * (1 + 1e-9))
				throw new Error(
					`${targetW} W would need ${level.toFixed(2)} V from the generator (at most ${plan.maxLevelVrms} V): stopped.`
				);
			const v = await read(level);
			gain = v / level;
			const measuredW = wattsInto(v, plan.loadOhms);
			if (plan.ratedPowerW !== null && measuredW > 2 * plan.ratedPowerW)
				throw new Error(`The output reached ${measuredW.toFixed(1)} W, over twice the rating: stopped.`);
			const indicatedW = await ask({ targetW, measuredW }, signal);
			const step: MeterStep = { targetW, generatorVrms: level, outputVrms: v, indicatedW };
			out.push(step);
			onStep(out.length, step);
		}
		return out;
	} finally {
		io.setGenerator(null);
	}
}
