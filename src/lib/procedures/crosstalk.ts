// Crosstalk: one channel driven, the other read at the driven frequency, both directions, in dB
// (20·lg of the leaked over the driven level). Pure: the bench plans and runs it, the server
// recomputes the figures and the verdict from each step's two levels.

export const CROSSTALK_FREQUENCIES_HZ = [100, 1000, 10_000] as const;
export const CROSSTALK_DIRECTIONS = ['left-to-right', 'right-to-left'] as const;
export type CrosstalkDirection = (typeof CROSSTALK_DIRECTIONS)[number];

/** The stream channel driven in a direction (0 = left, 1 = right) and the one read. */
export function crosstalkChannels(direction: CrosstalkDirection): { driven: 0 | 1; other: 0 | 1 } {
	return direction === 'left-to-right' ? { driven: 0, other: 1 } : { driven: 1, other: 0 };
}

export interface CrosstalkStep {
	frequencyHz: number;
	direction: CrosstalkDirection;
	/** Output of the driven channel, V rms. */
	drivenVrms: number;
	/** What the undriven channel carries at the driven frequency, V rms. */
	leakVrms: number;
}

/** Every step a full run visits: each frequency, left driven then right driven. */
export function crosstalkPlan(
	frequenciesHz: readonly number[] = CROSSTALK_FREQUENCIES_HZ
): { frequencyHz: number; direction: CrosstalkDirection }[] {
	return CROSSTALK_DIRECTIONS.flatMap((direction) =>
		frequenciesHz.map((frequencyHz) => ({ frequencyHz, direction }))
	);
}

export interface CrosstalkResult {
	/** Per step, dB (negative: the leak is below the driven level). */
	stepsDb: number[];
	/** Worst (highest) crosstalk per direction over the frequencies, dB (null with no step). */
	worstDb: Record<CrosstalkDirection, number | null>;
	/** Worst over everything, dB. */
	worstOverallDb: number | null;
}

export function evaluateCrosstalk(steps: readonly CrosstalkStep[]): CrosstalkResult {
	const stepsDb = steps.map((s) => {
		if (!(s.drivenVrms > 0)) throw new RangeError(`no driven level at ${s.frequencyHz} Hz (${s.direction})`);
		// A leak at or below the analyser's resolution is still a number: −200 dB stands for "none found".
		return s.leakVrms > 0 ? 20 * Math.log10(s.leakVrms / s.drivenVrms) : -200;
	});
	const worst = (d: CrosstalkDirection) => {
		const xs = stepsDb.filter((_, i) => steps[i].direction === d);
		return xs.length ? Math.max(...xs) : null;
	};
	const worstDb = { 'left-to-right': worst('left-to-right'), 'right-to-left': worst('right-to-left') };
	return { stepsDb, worstDb, worstOverallDb: stepsDb.length ? Math.max(...stepsDb) : null };
}
