// RIAA playback curve against the table computed from the IEC 60098 time constants (REFERENCES.md §2).
import { describe, expect, it } from 'vitest';
import { riaaPlaybackAnalog, riaaPlaybackDb, riaaRecordDb } from './riaa';

// [Hz, RIAA dB re 1 kHz, with IEC 7950 µs] — RIAA 1954 / IEC 60098 time constants 3180/318/75 µs (+7950 µs).
const RIAA_TABLE: [number, number, number][] = [
	[20, 19.27, 16.26],
	[50, 16.95, 16.3],
	[100, 13.09, 12.92],
	[200, 8.22, 8.18],
	[500, 2.65, 2.64],
	[1000, 0.0, 0.0],
	[2000, -2.59, -2.59],
	[5000, -8.21, -8.21],
	[10000, -13.73, -13.73],
	[20000, -19.62, -19.62]
];

describe('RIAA / IEC 60098', () => {
	it('playback curve matches the published table to its 0.01 dB rounding', () => {
		for (const [f, db] of RIAA_TABLE)
			expect(Math.abs(riaaPlaybackDb(f) - db), `${f} Hz`).toBeLessThanOrEqual(0.005 + 1e-9); // IEC 60098 table (REFERENCES §2)
	});

	it('with the IEC 7950 µs roll-off matches its column', () => {
		for (const [f, , db] of RIAA_TABLE)
			expect(Math.abs(riaaPlaybackDb(f, { iecRolloff: true }) - db), `${f} Hz`).toBeLessThanOrEqual(
				0.005 + 1e-9
			); // IEC 60098 amendment (REFERENCES §2)
	});

	it('approaches the +19.91 dB DC asymptote and the inverse is the negative', () => {
		expect(riaaPlaybackDb(0.01)).toBeCloseTo(19.91, 2); // REFERENCES §2 [computed]: DC asymptote +19.91 dB = 20·lg(3180/318) − …
		for (const f of [30, 3000, 4000]) expect(riaaRecordDb(f)).toBeCloseTo(-riaaPlaybackDb(f), 12);
		expect(riaaPlaybackDb(30)).toBeCloseTo(18.59, 2); // REFERENCES §2 [computed]: 30 Hz +18.59 dB
		expect(riaaPlaybackDb(4000)).toBeCloseTo(-6.61, 2); // REFERENCES §2 [computed]: 4 kHz −6.61 dB
	});

	it('analog coefficients give the same magnitude', () => {
		const { b, a, gain1kHz } = riaaPlaybackAnalog();
		for (const f of [20, 1000, 20000]) {
			const w = 2 * Math.PI * f;
			const num = Math.hypot(b[0], b[1] * w);
			const den = Math.hypot(a[0] - a[2] * w * w, a[1] * w);
			expect(20 * Math.log10((num / den) * gain1kHz)).toBeCloseTo(riaaPlaybackDb(f), 9);
		}
	});
});
