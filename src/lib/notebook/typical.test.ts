import { describe, expect, it } from 'vitest';
import { quantileSeq } from 'mathjs';
import {
	MIN_UNITS,
	placement,
	quantile7,
	summarise,
	typicalGroups,
	typicalText,
	whereItSits,
	type TypicalSample
} from './typical';

const thdn = { label: 'THD+N', unit: '%' };

describe('quantile7 (Hyndman & Fan 1996, definition 7; tests/REFERENCES.md §23)', () => {
	it('worked example: 1, 2, 3, 4 → Q1 1.75, median 2.5, Q3 3.25', () => {
		// REFERENCES.md §23: h = (n − 1)p = 0.75 → 1 + 0.75·(2 − 1) = 1.75; R's quantile(1:4) (type 7) agrees.
		expect(quantile7([1, 2, 3, 4], 0.25)).toBeCloseTo(1.75, 12);
		expect(quantile7([1, 2, 3, 4], 0.5)).toBeCloseTo(2.5, 12);
		expect(quantile7([1, 2, 3, 4], 0.75)).toBeCloseTo(3.25, 12);
		// Definition 6 (NIST/SEMATECH e-Handbook §7.2.6.2, p(N + 1)) would give Q1 = 1.25: not ours.
		expect(quantile7([1, 2, 3, 4], 0.25)).not.toBeCloseTo(1.25, 6);
	});

	it('worked example: odd count 0.008, 0.009, 0.011, 0.015, 0.020 → Q1 0.009, median 0.011, Q3 0.015', () => {
		// REFERENCES.md §23: n = 5, h = 1, 2, 3 fall on order statistics exactly.
		const v = [0.008, 0.009, 0.011, 0.015, 0.02];
		expect(quantile7(v, 0.25)).toBeCloseTo(0.009, 12);
		expect(quantile7(v, 0.5)).toBeCloseTo(0.011, 12);
		expect(quantile7(v, 0.75)).toBeCloseTo(0.015, 12);
	});

	it('agrees with an independent implementation (mathjs quantileSeq, linear interpolation) on uneven data', () => {
		// REFERENCES.md §23: mathjs interpolates at index p·(n − 1), the same definition.
		const v = [3.1, -2, 7.25, 0.4, 0.4, 12, 5.5, -0.75, 9].sort((a, b) => a - b);
		for (const p of [0, 0.1, 0.25, 0.37, 0.5, 0.75, 0.9, 1])
			expect(quantile7(v, p)).toBeCloseTo(quantileSeq(v, p) as number, 12);
	});

	it('refuses no values and p outside 0…1', () => {
		expect(() => quantile7([], 0.5)).toThrow(RangeError);
		expect(() => quantile7([1], 1.5)).toThrow(RangeError);
	});
});

describe('summarise', () => {
	it('says "not enough units yet" below three units, however many readings', () => {
		expect(MIN_UNITS).toBe(3);
		// Two units, two channels each: four readings, still two units.
		const t = summarise([
			{ unitId: 1, value: 0.01 },
			{ unitId: 1, value: 0.011 },
			{ unitId: 2, value: 0.012 },
			{ unitId: 2, value: 0.013 }
		]);
		expect(t).toEqual({ enough: false, units: 2, readings: 4 });
		expect(typicalText(thdn, t)).toBe('not enough units yet (2 units; 3 needed)');
		expect(placement(0.01, t)).toBeNull();
	});

	it('summarises three units (one reading per unit and channel)', () => {
		const t = summarise([
			{ unitId: 1, value: 0.008 },
			{ unitId: 1, value: 0.009 },
			{ unitId: 2, value: 0.011 },
			{ unitId: 2, value: 0.015 },
			{ unitId: 3, value: 0.02 },
			{ unitId: 3, value: Number.NaN }
		]);
		expect(t).toMatchObject({ enough: true, units: 3, readings: 5, min: 0.008, max: 0.02 });
		if (!t.enough) throw new Error('expected enough');
		expect(t.median).toBeCloseTo(0.011, 12);
		expect(t.q1).toBeCloseTo(0.009, 12);
		expect(t.q3).toBeCloseTo(0.015, 12);
		expect(placement(0.012, t)).toBe('within');
		expect(placement(0.005, t)).toBe('below');
		expect(placement(0.03, t)).toBe('above');
		expect(whereItSits(thdn, 0.012, t)).toBe(
			'THD+N 0.0120 % — typical for this model is 0.00900–0.0150 %, from 3 units (within the typical range)'
		);
	});

	it('the one-unit sentence', () => {
		expect(whereItSits(thdn, 0.012, summarise([{ unitId: 9, value: 0.01 }]))).toBe(
			'THD+N 0.0120 % — not enough units yet for this model (1 unit so far; 3 needed)'
		);
	});
});

describe('typicalGroups', () => {
	const s = (
		unitId: number,
		cond: string,
		metric: TypicalSample['metric'],
		value: number
	): TypicalSample => ({
		unitId,
		snapshotId: unitId * 10,
		conditionsKey: cond,
		conditionsLabel: `conditions ${cond}`,
		metric,
		value
	});

	it('keeps conditions apart and puts the most-measured first', () => {
		const groups = typicalGroups([
			s(1, 'b', 'thdnPercent', 0.1),
			s(1, 'a', 'thdnPercent', 0.01),
			s(2, 'a', 'thdnPercent', 0.02),
			s(3, 'a', 'thdnPercent', 0.03),
			s(3, 'a', 'snrDb', 90)
		]);
		expect(groups.map((g) => [g.conditionsKey, g.units])).toEqual([
			['a', 3],
			['b', 1]
		]);
		expect(groups[0].rows.map((r) => r.metric)).toEqual(['thdnPercent', 'snrDb']);
		expect(groups[0].rows[0].typical).toMatchObject({ enough: true, median: 0.02 });
		// SNR came from one unit only: not enough, though the group has three.
		expect(groups[0].rows[1].typical).toEqual({ enough: false, units: 1, readings: 1 });
		expect(groups[1].rows[0].typical.enough).toBe(false);
	});
});
