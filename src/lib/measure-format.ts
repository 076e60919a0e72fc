// Number formatting for measurement readouts: a fixed number of significant digits so readouts
// do not jump in width, units scaled to the value (V, mV, µV; W, mW, µW, nW), and a dash for figures
// not measured.

const DASH = '—';

function ok(v: number | null | undefined): v is number {
	return typeof v === 'number' && Number.isFinite(v);
}

/** "12.34" with `digits` significant digits, no exponent for the ranges readouts see. */
export function sig(v: number, digits = 4): string {
	if (v === 0) return '0';
	let mag = Math.floor(Math.log10(Math.abs(v)));
	// 0.99996 rounds up to 1.000 at 4 digits: count the decimals from the rounded magnitude.
	if (Math.abs(Number(v.toPrecision(digits))) >= 10 ** (mag + 1)) mag++;
	const decimals = Math.max(0, Math.min(9, digits - 1 - mag));
	return v.toFixed(decimals);
}

/** Voltage with a scaled unit: { value: "12.35", unit: "mV" }. */
export function volts(v: number | null | undefined, digits = 4): { value: string; unit: string } {
	if (!ok(v)) return { value: DASH, unit: 'V' };
	const a = Math.abs(v);
	if (a >= 1 || a === 0) return { value: sig(v, digits), unit: 'V' };
	if (a >= 1e-3) return { value: sig(v * 1e3, digits), unit: 'mV' };
	return { value: sig(v * 1e6, digits), unit: 'µV' };
}

/** SI prefixes for power readouts, largest first; below the last the figure reads in pW. */
const POWER_UNITS: readonly [number, string][] = [
	[1, 'W'],
	[1e-3, 'mW'],
	[1e-6, 'µW'],
	[1e-9, 'nW'],
	[1e-12, 'pW']
];

/** Power with a scaled SI unit and `digits` significant digits: 5e-9 W → { value: "5.000", unit: "nW" }. */
export function watts(w: number | null | undefined, digits = 4): { value: string; unit: string } {
	if (!ok(w)) return { value: DASH, unit: 'W' };
	if (w === 0) return { value: '0', unit: 'W' };
	const a = Math.abs(w);
	let i = POWER_UNITS.findIndex(([scale]) => a >= scale);
	if (i < 0) i = POWER_UNITS.length - 1;
	// Rounding to `digits` can carry 999.96 µW up to "1000": that reads in the next unit up.
	if (i > 0 && Math.abs(Number(sig(w / POWER_UNITS[i][0], digits))) >= 1000) i--;
	const [scale, unit] = POWER_UNITS[i];
	return { value: sig(w / scale, digits), unit };
}

/** Power as one string, "5.000 nW": for text that shows a power outside a readout grid. */
export function wattsLabel(w: number | null | undefined, digits = 4): string {
	const p = watts(w, digits);
	return `${p.value} ${p.unit}`;
}

/** dB figures with fixed decimals (default 2). */
export function db(v: number | null | undefined, decimals = 2): string {
	if (!ok(v)) return DASH;
	if (v <= -299) return '−∞';
	const s = v.toFixed(decimals);
	return s.startsWith('-') ? `−${s.slice(1)}` : s;
}

/** Signed dB: "+0.12", "−3.40". */
export function dbSigned(v: number | null | undefined, decimals = 2): string {
	if (!ok(v)) return DASH;
	const s = db(v, decimals);
	return v >= 0 ? `+${s}` : s;
}

/** Percent with about 3 significant digits, down to 0.0001 %. */
export function percent(v: number | null | undefined): string {
	if (!ok(v)) return DASH;
	if (v >= 10) return v.toFixed(1);
	if (v >= 1) return v.toFixed(2);
	if (v >= 0.1) return v.toFixed(3);
	if (v >= 0.01) return v.toFixed(4);
	if (v >= 0.001) return v.toFixed(5);
	return v.toFixed(6);
}

export function hz(v: number | null | undefined): { value: string; unit: string } {
	if (!ok(v)) return { value: DASH, unit: 'Hz' };
	if (Math.abs(v) >= 10_000) return { value: sig(v / 1000, 5), unit: 'kHz' };
	return { value: sig(v, 5), unit: 'Hz' };
}

/**
 * A frequency as a short label with up to `digits` significant digits and no trailing zeros:
 * "1 kHz", "20 Hz", "19.95 kHz". `compact` gives the axis form without a unit: "20", "2k".
 * The one frequency label of the app (limits, chart axes and the bench all use it).
 */
export function hzLabel(v: number, options: { digits?: number; compact?: boolean } = {}): string {
	if (!ok(v)) return DASH;
	const digits = options.digits ?? 4;
	// Rounded before the unit is chosen: a fitted 999.99999 Hz reads "1 kHz" like 1000.00001 Hz.
	const r = +v.toPrecision(digits);
	const kilo = Math.abs(r) >= 1000;
	const n = +(kilo ? r / 1000 : r).toPrecision(digits);
	if (options.compact) return kilo ? `${n}k` : `${n}`;
	return kilo ? `${n} kHz` : `${n} Hz`;
}

export function fftLabel(n: number): string {
	return n >= 1024 ? `${n / 1024}k` : String(n);
}

/** What a readout shows instead of a figure that needs a tone when none was measured. */
export const NO_SIGNAL = 'no signal';

/**
 * A noise or hum level as a technician reads it: µV/mV/V and dBV (0 dBV = 1 V rms), never as power
 * into the load. { value: "257.4", unit: "µV", dbv: "−71.79" }.
 */
export function noiseLevel(v: number | null | undefined): { value: string; unit: string; dbv: string } {
	const x = volts(v);
	return { ...x, dbv: ok(v) && v > 0 ? db(20 * Math.log10(v)) : DASH };
}

/** Orders as a short range list: [5, 6, 7, 8] → "H5–H8", [2, 4] → "H2, H4". */
export function ordersLabel(orders: readonly number[]): string {
	if (orders.length === 0) return '';
	const contiguous = orders.every((o, i) => i === 0 || o === orders[i - 1] + 1);
	if (contiguous && orders.length > 2) return `H${orders[0]}–H${orders[orders.length - 1]}`;
	return orders.map((o) => `H${o}`).join(', ');
}
