// Steadiness statistics, checked against hand-computed spread and population standard deviation.
import { describe, expect, it } from 'vitest';
import { steadiness, SteadinessTracker } from './steadiness';

describe('steadiness', () => {
	it('spread and standard deviation of level and THD+N', () => {
		const st = steadiness([
			{ levelDbv: 0, thdnDb: -80 },
			{ levelDbv: 1, thdnDb: -82 },
			{ levelDbv: 2, thdnDb: -81 },
			{ levelDbv: 1, thdnDb: -80 }
		]);
		expect(st.frames).toBe(4);
		expect(st.levelSpreadDb).toBe(2);
		expect(st.levelMeanDbv).toBe(1);
		expect(st.levelStdDb).toBeCloseTo(Math.sqrt(0.5), 12); // deviations −1, 0, 1, 0 → variance 2/4
		expect(st.thdnSpreadDb).toBe(2);
		expect(st.thdnStdDb).toBeCloseTo(Math.sqrt(2.75 / 4), 12); // deviations 0.75, −1.25, −0.25, 0.75
		expect(steadiness([]).frames).toBe(0);
	});

	it('the tracker keeps only the newest frames of its window', () => {
		const tr = new SteadinessTracker(50);
		for (let i = 0; i < 50; i++) tr.push(i % 2 ? 3 : -3, -60); // a scratchy control: ±3 dB jumps
		expect(tr.stats().levelSpreadDb).toBe(6);
		for (let i = 0; i < 50; i++) tr.push(0.01 * (i % 2), -90); // after cleaning: steady
		const st = tr.stats();
		expect(tr.size).toBe(50);
		expect(st.levelSpreadDb).toBeCloseTo(0.01, 12);
		expect(st.thdnSpreadDb).toBe(0);
		expect(st.thdnMeanDb).toBe(-90);
		tr.push(NaN, -90);
		expect(tr.stats().levelSpreadDb).toBeCloseTo(0.01, 12);
		tr.reset();
		expect(tr.stats().frames).toBe(0);
	});
});
