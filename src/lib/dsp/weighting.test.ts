// A- and C-weighting against the IEC 61672-1 table (REFERENCES.md §1), at the exact frequencies 1000·10^(n/10).
import { describe, expect, it } from 'vitest';
import { aWeightingDb, aWeightingPowerGain, aWeightingTable, cWeightingDb } from './weighting';

// [n, A dB, C dB]: IEC 61672-1 table of frequency weightings (one-third-octave exact frequencies 1000·10^(n/10)).
const IEC_61672_TABLE: [number, number, number][] = [
	[-20, -70.4, -14.3],
	[-19, -63.4, -11.2],
	[-18, -56.7, -8.5],
	[-17, -50.5, -6.2],
	[-16, -44.7, -4.4],
	[-15, -39.4, -3.0],
	[-14, -34.6, -2.0],
	[-13, -30.2, -1.3],
	[-12, -26.2, -0.8],
	[-11, -22.5, -0.5],
	[-10, -19.1, -0.3],
	[-9, -16.1, -0.2],
	[-8, -13.4, -0.1],
	[-7, -10.9, 0.0],
	[-6, -8.6, 0.0],
	[-5, -6.6, 0.0],
	[-4, -4.8, 0.0],
	[-3, -3.2, 0.0],
	[-2, -1.9, 0.0],
	[-1, -0.8, 0.0],
	[0, 0.0, 0.0],
	[1, 0.6, 0.0],
	[2, 1.0, -0.1],
	[3, 1.2, -0.2],
	[4, 1.3, -0.3],
	[5, 1.2, -0.5],
	[6, 1.0, -0.8],
	[7, 0.5, -1.3],
	[8, -0.1, -2.0],
	[9, -1.1, -3.0],
	[10, -2.5, -4.4],
	[11, -4.3, -6.2],
	[12, -6.6, -8.5],
	[13, -9.3, -11.2]
];

describe('IEC 61672-1 weightings', () => {
	it('A-weighting reproduces every row of the table within its 0.1 dB rounding', () => {
		for (const [n, aDb] of IEC_61672_TABLE) {
			const f = 1000 * 10 ** (n / 10);
			// 0.05 dB is the printed rounding; 158.5 Hz computes to −13.4500 dB, on the rounding boundary, hence +1e-4.
			expect(Math.abs(aWeightingDb(f) - aDb), `A at ${f.toFixed(2)} Hz`).toBeLessThanOrEqual(0.05 + 1e-4); // IEC 61672-1 table (REFERENCES §1)
		}
	});

	it('C-weighting reproduces every row of the table within its 0.1 dB rounding', () => {
		for (const [n, , cDb] of IEC_61672_TABLE) {
			const f = 1000 * 10 ** (n / 10);
			expect(Math.abs(cWeightingDb(f) - cDb), `C at ${f.toFixed(2)} Hz`).toBeLessThanOrEqual(0.05 + 1e-9); // IEC 61672-1 table (REFERENCES §1)
		}
	});

	it('is 0 dB at 1 kHz and the power gain is the square of the dB response', () => {
		expect(Math.abs(aWeightingDb(1000))).toBeLessThan(0.001); // IEC 61672-1: A1000 normalisation, −2.000 dB + 2.00 dB
		for (const f of [31.5, 1000, 8000])
			expect(10 * Math.log10(aWeightingPowerGain(f))).toBeCloseTo(aWeightingDb(f), 10);
		const t = aWeightingTable(5, 250);
		expect(t[0]).toBe(0);
		expect(t[4]).toBeCloseTo(aWeightingPowerGain(1000), 12);
	});

	it('nominal-frequency pitfall: 12.5 Hz evaluates to −63.6 dB, not the table’s −63.4', () => {
		expect(aWeightingDb(12.5)).toBeCloseTo(-63.6, 1); // REFERENCES §1 pitfall [computed]: nominal 12.5 Hz → −63.6 dB
	});
});
