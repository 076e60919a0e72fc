// Stepped-sine sweeps: the frequencies visited, each step's level relative to 1 kHz, and the
// flatness over a band. Pure, shared by the bench (running a sweep), the server (recomputing a
// saved one from its raw per-step levels) and the tests.

/** Points per octave a sweep may use. */
export const SWEEP_DENSITIES = [3, 6, 12] as const;
export type SweepDensity = (typeof SWEEP_DENSITIES)[number];

/**
 * Sweep frequencies from `lowHz` to `highHz` at `perOctave` points per octave on the base-ten
 * fractional-octave series of IEC 61260-1 (fm = 1000 · G^(x/b), G = 10^(3/10)), so 1 kHz is
 * always a step and a 3-per-octave sweep visits the familiar third-octave centres.
 */
export function sweepFrequencies(perOctave: SweepDensity, lowHz = 20, highHz = 20_000): number[] {
	if (!(lowHz > 0) || !(highHz > lowHz)) throw new RangeError('the sweep needs 0 < low < high');
	const g = 10 ** (3 / 10);
	const at = (x: number) => 1000 * g ** (x / perOctave);
	// Exact band edges count in: 19.95 Hz is the series' "20 Hz" (0.5 % below it).
	const tol = 1.006;
	const xLow = Math.ceil((perOctave * Math.log(lowHz / tol / 1000)) / Math.log(g) - 1e-9);
	const xHigh = Math.floor((perOctave * Math.log((highHz * tol) / 1000)) / Math.log(g) + 1e-9);
	const out: number[] = [];
	for (let x = xLow; x <= xHigh; x++) out.push(round6(at(x)));
	return out;
}

function round6(f: number): number {
	const p = 10 ** (5 - Math.floor(Math.log10(f)));
	return Math.round(f * p) / p;
}

/** One step of a sweep as measured: the output level per channel (V rms, null = not read). */
export interface SweepStep {
	frequencyHz: number;
	levelVrms: (number | null)[];
}

/** Levels in dB relative to the 1 kHz step, per channel (null where a level is missing). */
export function relativeLevelsDb(steps: readonly SweepStep[]): (number | null)[][] {
	const ref = steps.find((s) => Math.abs(s.frequencyHz - 1000) < 1e-6);
	if (!ref) throw new RangeError('the sweep has no 1 kHz step to refer its levels to');
	return steps.map((s) =>
		s.levelVrms.map((v, ch) => {
			const r = ref.levelVrms[ch];
			return v != null && r != null && v > 0 && r > 0 ? 20 * Math.log10(v / r) : null;
		})
	);
}

export interface Flatness {
	/** Highest and lowest level re 1 kHz inside the band, dB. */
	maxDb: number;
	minDb: number;
	/** Half the spread: the "± dB" figure. */
	plusMinusDb: number;
	/** The steps that were inside the band. */
	points: number;
}

/** Flatness of one channel's relative levels over [lowHz, highHz] (inclusive), or null without points. */
export function flatness(
	frequenciesHz: readonly number[],
	relDb: readonly (number | null)[],
	lowHz: number,
	highHz: number
): Flatness | null {
	let maxDb = -Infinity;
	let minDb = Infinity;
	let points = 0;
	frequenciesHz.forEach((f, i) => {
		const v = relDb[i];
		if (v == null || f < lowHz * 0.999 || f > highHz * 1.001) return;
		maxDb = Math.max(maxDb, v);
		minDb = Math.min(minDb, v);
		points++;
	});
	if (!points) return null;
	return { maxDb, minDb, plusMinusDb: (maxDb - minDb) / 2, points };
}
