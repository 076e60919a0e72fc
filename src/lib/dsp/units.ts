// Level and power unit conversions shared by the analysis, the bridge and the UI.
// 0 dBV = 1 V rms; 0 dBu = √0.6 V rms (1 mW into 600 Ω); P = V²/R.

export const DBU_REF_VRMS = Math.sqrt(0.6);

export function vrmsToDbv(vrms: number): number {
	return 20 * Math.log10(vrms);
}
export function dbvToVrms(dbv: number): number {
	return 10 ** (dbv / 20);
}
export function vrmsToDbu(vrms: number): number {
	return 20 * Math.log10(vrms / DBU_REF_VRMS);
}
export function dbuToVrms(dbu: number): number {
	return DBU_REF_VRMS * 10 ** (dbu / 20);
}
/** Power in watts of an rms voltage across a resistive load. */
export function wattsIntoLoad(vrms: number, loadOhms: number): number {
	return (vrms * vrms) / loadOhms;
}
/** The rms voltage that delivers `watts` into `loadOhms` (V = √(P·R)). */
export function vrmsForWatts(watts: number, loadOhms: number): number {
	return Math.sqrt(watts * loadOhms);
}
export function ratioToDb(ratio: number): number {
	return 20 * Math.log10(ratio);
}
export function dbToRatio(db: number): number {
	return 10 ** (db / 20);
}
export function celsiusToFahrenheit(c: number): number {
	return (c * 9) / 5 + 32;
}
export function fahrenheitToCelsius(f: number): number {
	return ((f - 32) * 5) / 9;
}
