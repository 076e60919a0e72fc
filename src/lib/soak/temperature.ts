// Temperature display in the unit the technician picked; storage and limits stay in °C.
import { celsiusToFahrenheit, fahrenheitToCelsius } from '$lib/dsp/units';

export type TempUnit = 'C' | 'F';

export function toUnit(celsius: number, unit: TempUnit): number {
	return unit === 'F' ? celsiusToFahrenheit(celsius) : celsius;
}

export function fromUnit(value: number, unit: TempUnit): number {
	return unit === 'F' ? fahrenheitToCelsius(value) : value;
}

/** A temperature difference or rate: only the scale factor applies, not the offset. */
export function deltaToUnit(deltaC: number, unit: TempUnit): number {
	return unit === 'F' ? (deltaC * 9) / 5 : deltaC;
}

export function formatTemp(celsius: number | null | undefined, unit: TempUnit, digits = 1): string {
	if (celsius === null || celsius === undefined || !Number.isFinite(celsius)) return '—';
	return `${toUnit(celsius, unit).toFixed(digits)} °${unit}`;
}

/** Soak seconds as h:mm:ss or m:ss. */
export function formatSoakTime(seconds: number): string {
	const total = Math.max(0, Math.round(seconds));
	const h = Math.floor(total / 3600);
	const m = Math.floor((total % 3600) / 60);
	const s = total % 60;
	const p = (n: number) => String(n).padStart(2, '0');
	return h ? `${h}:${p(m)}:${p(s)}` : `${m}:${p(s)}`;
}
