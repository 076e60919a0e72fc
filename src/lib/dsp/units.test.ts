// Level, power and converter definitions (REFERENCES.md §5).
import { describe, expect, it } from 'vitest';
import { dbuToVrms, dbvToVrms, vrmsForWatts, vrmsToDbu, vrmsToDbv, wattsIntoLoad } from './units';

describe('units', () => {
	it('dBu and dBV references', () => {
		expect(dbuToVrms(0)).toBeCloseTo(0.774597, 6); // 0 dBu = √0.6 V = 1 mW into 600 Ω (D. Self, Small Signal Audio Design)
		expect(dbvToVrms(0)).toBe(1); // 0 dBV = 1 V rms (definition)
		expect(vrmsToDbv(1) - vrmsToDbu(1)).toBeCloseTo(-2.2185, 4); // dBV = dBu − 2.2185 (REFERENCES §5)
		expect(dbuToVrms(4)).toBeCloseTo(1.2277, 4); // +4 dBu = 1.2277 V (REFERENCES §5)
		expect(dbvToVrms(-10)).toBeCloseTo(0.3162, 4); // −10 dBV = 0.3162 V (REFERENCES §5)
	});

	it('P = V²/R', () => {
		expect(wattsIntoLoad(20, 8)).toBe(50); // P = V²/R: 20 V into 8 Ω = 50 W (REFERENCES §5)
		expect(wattsIntoLoad(28.28, 8)).toBeCloseTo(100, 1); // 28.28 V into 8 Ω = 100 W (REFERENCES §5)
		expect(vrmsForWatts(50, 8)).toBeCloseTo(20, 12);
	});

	it('ideal N-bit SNR and ENOB', () => {
		const idealSnr = (bits: number) => 20 * Math.log10(2 ** bits) + 10 * Math.log10(1.5);
		expect(idealSnr(16)).toBeCloseTo(98.09, 2); // 6.02N + 1.76 exact form, 16 bit: 98.09 dB (REFERENCES §5, IEEE 1241)
		expect(idealSnr(24)).toBeCloseTo(146.26, 2); // 24 bit: 146.26 dB exact (6.02·24 + 1.76 = 146.24) (REFERENCES §5)
		const enob = (sinadDb: number) => (sinadDb - 1.76) / 6.02;
		expect(enob(98.08)).toBeCloseTo(16, 6); // ENOB = (SINAD − 1.76)/6.02 (IEEE 1241; microchip ADC ENOB page)
	});
});
