// Number formatting for measurement readouts: a fixed number of significant digits so readouts
// do not jump in width, units scaled to the value (V, mV, µV), and a dash for figures not measured.

const DASH = '—';

function ok(v: number | null | undefined): v is number {
	return typeof v === 'number' && Number.isFinite(v);
}

/** "12.34" with `digits` significant digits, no exponent for the ranges readouts see. */
export function sig(v: number, digits = 4): string {
	if (v === 0) return '0';
	const mag = Math.floor(Math.log10(Math.abs(v)));
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

export function watts(w: number | null | undefined, digits = 4): { value: string; unit: string } {
	if (!ok(w)) return { value: DASH, unit: 'W' };
	if (Math.abs(w) >= 1 || w === 0) return { value: sig(w, digits), unit: 'W' };
	return { value: sig(w * 1e3, digits), unit: 'mW' };
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

/** A frequency as a short label: "1 kHz", "20 Hz", "19.5 kHz". */
export function hzLabel(v: number): string {
	if (v >= 1000) return `${+(v / 1000).toPrecision(3)} kHz`;
	return `${+v.toPrecision(3)} Hz`;
}

export function fftLabel(n: number): string {
	return n >= 1024 ? `${n / 1024}k` : String(n);
}
