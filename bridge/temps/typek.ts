// Type K thermocouple conversions, NIST ITS-90 reference functions (NIST Monograph 175):
// the forward function E(t) for 0–1372 °C and the inverse polynomial for 0–20.644 mV (0–500 °C).

const FORWARD_C = [
	-1.7600413686e-2, 3.8921204975e-2, 1.8558770032e-5, -9.9457592874e-8, 3.1840945719e-10, -5.6072844889e-13,
	5.6075059059e-16, -3.2020720003e-19, 9.7151147152e-23, -1.2104721275e-26
];
const FORWARD_A0 = 1.185976e-1;
const FORWARD_A1 = -1.183432e-4;
const FORWARD_A2 = 1.269686e2;

const INVERSE_D = [
	0, 2.508355e1, 7.860106e-2, -2.503131e-1, 8.31527e-2, -1.228034e-2, 9.804036e-4, -4.41303e-5, 1.057734e-6,
	-1.052755e-8
];

export const TYPE_K_INVERSE_MAX_MV = 20.644;

function poly(c: readonly number[], x: number): number {
	let y = 0;
	for (let i = c.length - 1; i >= 0; i--) y = y * x + c[i];
	return y;
}

/** Thermocouple EMF (mV, reference junction at 0 °C) for a hot-junction temperature 0–1372 °C. */
export function typeKCelsiusToMillivolts(celsius: number): number {
	if (!(celsius >= 0 && celsius <= 1372)) throw new RangeError('type K forward function covers 0–1372 °C');
	return poly(FORWARD_C, celsius) + FORWARD_A0 * Math.exp(FORWARD_A1 * (celsius - FORWARD_A2) ** 2);
}

/** Temperature (°C) for an EMF of 0–20.644 mV referred to 0 °C (NIST error −0.05 to +0.04 °C). */
export function typeKMillivoltsToCelsius(millivolts: number): number {
	if (!(millivolts >= 0 && millivolts <= TYPE_K_INVERSE_MAX_MV))
		throw new RangeError(`type K inverse polynomial covers 0–${TYPE_K_INVERSE_MAX_MV} mV`);
	return poly(INVERSE_D, millivolts);
}

/**
 * Hot-junction temperature for a measured EMF with the cold (reference) junction at
 * `coldJunctionC`: add the cold junction's own EMF, then invert.
 */
export function typeKCompensated(millivolts: number, coldJunctionC = 0): number {
	const cj = coldJunctionC === 0 ? 0 : typeKCelsiusToMillivolts(coldJunctionC);
	return typeKMillivoltsToCelsius(millivolts + cj);
}
