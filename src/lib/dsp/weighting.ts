// Frequency weightings of IEC 61672-1 (A and C), applied to noise in the frequency domain:
// each spectrum bin's power is multiplied by the squared weighting gain at its centre frequency.

// Pole frequencies of the IEC 61672-1 analytic annex (exact values, not the rounded 20.6/107.7/737.9/12194 Hz).
const F1_HZ = 20.598997;
const F2_HZ = 107.65265;
const F3_HZ = 737.86223;
const F4_HZ = 12194.217;
/** Normalisation constants: +2.00 dB (A) and +0.06 dB (C) make the response 0 dB at 1 kHz. */
const A1000_DB = 2.0;
const C1000_DB = 0.062;

function raSquared(f: number): number {
	const f2 = f * f;
	const num = F4_HZ * F4_HZ * f2 * f2;
	const den =
		(f2 + F1_HZ * F1_HZ) * Math.sqrt((f2 + F2_HZ * F2_HZ) * (f2 + F3_HZ * F3_HZ)) * (f2 + F4_HZ * F4_HZ);
	const r = num / den;
	return r * r;
}

/** A-weighting in dB at `frequencyHz` (0 dB at 1 kHz). */
export function aWeightingDb(frequencyHz: number): number {
	if (frequencyHz <= 0) return -Infinity;
	return 10 * Math.log10(raSquared(frequencyHz)) + A1000_DB;
}

/** Linear power gain of the A-weighting (|A(f)|²). */
export function aWeightingPowerGain(frequencyHz: number): number {
	if (frequencyHz <= 0) return 0;
	return raSquared(frequencyHz) * 10 ** (A1000_DB / 10);
}

/** C-weighting in dB at `frequencyHz` (0 dB at 1 kHz). */
export function cWeightingDb(frequencyHz: number): number {
	if (frequencyHz <= 0) return -Infinity;
	const f2 = frequencyHz * frequencyHz;
	const rc = (F4_HZ * F4_HZ * f2) / ((f2 + F1_HZ * F1_HZ) * (f2 + F4_HZ * F4_HZ));
	return 20 * Math.log10(rc) + C1000_DB;
}

/** Power gain |A(f)|² for each bin k·binHz, k = 0…bins−1 (for weighting a spectrum in place). */
export function aWeightingTable(bins: number, binHz: number, out = new Float64Array(bins)): Float64Array {
	for (let k = 0; k < bins; k++) out[k] = aWeightingPowerGain(k * binHz);
	return out;
}
