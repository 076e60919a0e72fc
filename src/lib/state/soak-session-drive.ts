// The drive servo: the generator level that should give the run's output, and the bounded
// correction from the measured output level. Pure functions of the run and what was measured.
import { GENERATOR_MAX_VRMS } from '$lib/bridge/protocol';
import type { SoakChannel } from '$lib/soak/presets';

/** Output level within this fraction of the target counts as on target. */
export const LEVEL_TOLERANCE = 0.03;
/** Never more than 12 dB above the first estimate: a dead channel must not be chased to full scale. */
export const SERVO_CEILING_RATIO = 4;
/** One correction at most halves or doubles the level. */
const MAX_STEP_RATIO = 2;

export interface DriveTarget {
	driveVrms: number;
	channels: readonly SoakChannel[];
}

/** The channel index a soak channel is measured on. */
export const channelIndex = (c: SoakChannel) => (c === 'left' ? 0 : 1);

/** Mean output level over the driven channels, or null when none was measured. */
export function drivenLevelVrms(run: DriveTarget, levelVrms: readonly (number | null)[]): number | null {
	const driven = run.channels.map((c) => levelVrms[channelIndex(c)]).filter((v): v is number => v !== null);
	return driven.length ? driven.reduce((a, b) => a + b, 0) / driven.length : null;
}

/** The first generator level: the simulator's gain when known, else 40 dB below the target (real hardware). */
export function estimateLevelVrms(driveVrms: number, simulatorVolumeDb: number | null): number {
	const gainDb = simulatorVolumeDb ?? 40;
	return Math.min(GENERATOR_MAX_VRMS, driveVrms / 10 ** (gainDb / 20));
}

export function isOnTarget(run: DriveTarget, levelVrms: readonly (number | null)[]): boolean {
	const measured = drivenLevelVrms(run, levelVrms);
	return measured !== null && Math.abs(measured / run.driveVrms - 1) <= LEVEL_TOLERANCE * 2;
}

/**
 * The next generator level, or null to leave it: scaled by target ÷ measured, at most ×2 or ÷2
 * a step and never above the ceiling over the first level.
 */
export function servoNextLevel(
	run: DriveTarget,
	levelVrms: readonly (number | null)[],
	currentVrms: number,
	initialVrms: number
): number | null {
	const measured = drivenLevelVrms(run, levelVrms);
	if (measured === null || measured < 1e-3) return null;
	const ratio = run.driveVrms / measured;
	if (Math.abs(ratio - 1) <= LEVEL_TOLERANCE) return null;
	const ceiling = Math.min(GENERATOR_MAX_VRMS, initialVrms * SERVO_CEILING_RATIO);
	const next = Math.min(ceiling, currentVrms * Math.min(MAX_STEP_RATIO, Math.max(1 / MAX_STEP_RATIO, ratio)));
	if (Math.abs(next - currentVrms) / currentVrms < 0.005) return null;
	return next;
}
