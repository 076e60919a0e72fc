// Sources named beside the checks are described in tests/REFERENCES.md § Heat soak.
// The soak page's watch and drive servo without a browser: a relay opening (a sudden loss of
// level) is a dropout breach while a servo step or the drive starting is not, DC offset is logged
// only from a DC-coupled input, THD+N is sampled on target and judged against the ceiling, and
// the servo corrects by target ÷ measured in bounded steps.
import { describe, expect, it } from 'vitest';
import { SoakWatch, type MeasuredOutput } from './soak-session-watch';
import { isOnTarget, servoNextLevel } from './soak-session-drive';
import { runLimits } from '$lib/soak/soak-limits';

const T0 = 1_800_000_000_000;
const run = { startedAt: T0, timeScale: 1, driveVrms: 10, channels: ['left', 'right'] as const };
const m = (
	atMs: number,
	left: number | null,
	right: number | null,
	extra: Partial<MeasuredOutput> = {}
): MeasuredOutput => ({
	levelVrms: [left, right],
	powerW: [left === null ? null : (left * left) / 8, right === null ? null : (right * right) / 8], // P = V²/R into 8 Ω
	thdnPercent: [0.01, 0.01],
	atMs,
	...extra
});

describe('output dropout', () => {
	it('ends the run when a driven channel falls more than 20 dB within 2 s', () => {
		const w = new SoakWatch({ ...run, channels: ['left', 'right'] }, runLimits());
		expect(w.dropout(m(T0 + 0, 10, 10), true)).toBeNull();
		expect(w.dropout(m(T0 + 500, 10, 10), true)).toBeNull();
		// The right channel's relay opens: 10 V → 0.05 V is 20·lg(200) = 46 dB.
		const b = w.dropout(m(T0 + 1000, 10, 0.05), true);
		expect(b).toMatchObject({ kind: 'output-dropout', probe: 'right', limit: 20 });
		expect(b?.value).toBeCloseTo(46.02, 2); // 20·lg(10 / 0.05)
		expect(b?.message).toMatch(/^Right channel output fell 46 dB within 2 s/);
	});

	it('is not a 19 dB dip, nor a fall spread over more than 2 s, nor the drive off or starting', () => {
		const w = new SoakWatch(run, runLimits());
		w.dropout(m(T0, 10, 10), true);
		expect(w.dropout(m(T0 + 500, 10, 10 / 10 ** (19 / 20)), true)).toBeNull(); // 19 dB
		const slow = new SoakWatch(run, runLimits());
		// 10 → 3 → 0.9 → 0.27 V, 1.5 s apart: never 20 dB within any 2 s window.
		expect(slow.dropout(m(T0, 10, 10), true)).toBeNull();
		expect(slow.dropout(m(T0 + 1500, 10, 3), true)).toBeNull();
		expect(slow.dropout(m(T0 + 3000, 10, 0.9), true)).toBeNull();
		expect(slow.dropout(m(T0 + 4500, 10, 0.27), true)).toBeNull();
		// The generator turned off: a fall is expected.
		const off = new SoakWatch(run, runLimits());
		off.dropout(m(T0, 10, 10), true);
		expect(off.dropout(m(T0 + 500, 0.01, 0.01), false)).toBeNull();
		// Coming up from nothing (the drive starting) is never a dropout.
		const starting = new SoakWatch(run, runLimits());
		expect(starting.dropout(m(T0, 0.1, 0.1), true)).toBeNull();
		expect(starting.dropout(m(T0 + 500, 0.001, 0.001), true)).toBeNull();
	});
});

describe('DC offset', () => {
	it('is logged only where the input is DC-coupled, each minute and when it moves 10 mV', () => {
		const w = new SoakWatch(run, runLimits());
		const at = (ms: number, l: number, r: number) => m(T0 + ms, 10, 10, { dcVolts: [l, r] });
		expect(w.dcOffset(at(0, 0.012, -0.004), false)).toEqual([]);
		expect(w.dcOffset(at(0, 0.012, -0.004), true)).toEqual([
			{ channel: 'left', dcVolts: 0.012 },
			{ channel: 'right', dcVolts: -0.004 }
		]);
		expect(w.dcOffset(at(10_000, 0.015, -0.004), true)).toEqual([]); // moved 3 mV, 10 s later
		expect(w.dcOffset(at(20_000, 0.025, -0.004), true)).toEqual([{ channel: 'left', dcVolts: 0.025 }]);
		expect(w.dcOffset(at(61_000, 0.025, -0.004), true)).toEqual([{ channel: 'right', dcVolts: -0.004 }]);
	});
});

describe('THD+N', () => {
	it('is sampled every 10 s on target, at once and judged when over the ceiling (−40 dB = 1 %)', () => {
		const w = new SoakWatch(run, runLimits(undefined, { thdnCeilingDb: -40 }));
		const at = (ms: number, thdn: number) => m(T0 + ms, 10, 10, { thdnPercent: [thdn, thdn / 2] });
		expect(w.thdnSample(at(0, 0.02), false, T0)).toBeNull(); // off target: nothing
		expect(w.thdnSample(at(0, 0.02), true, T0)?.record).toMatchObject({
			channel: 'left',
			thdnPercent: 0.02,
			outputW: 12.5
		});
		expect(w.thdnSample(at(5000, 0.02), true, T0 + 5000)).toBeNull();
		const over = w.thdnSample(at(6000, 1.2), true, T0 + 6000);
		expect(over?.over).toBe(true);
		const breaches = w.check();
		expect(breaches.map((b) => b.kind)).toEqual(['thdn']);
		expect(breaches[0].message).toMatch(/^Left channel THD\+N 1\.200 % \(ceiling 1\.000 % = -40\.0 dB\)/);
	});
});

describe('drive servo', () => {
	const target = { driveVrms: 10, channels: ['left', 'right'] as const };
	it('scales the level by target ÷ measured, at most ×2 a step and ×4 the first level', () => {
		expect(servoNextLevel(target, [5, 5], 0.1, 0.1)).toBeCloseTo(0.2, 12); // ×2
		expect(servoNextLevel(target, [8, 8], 0.1, 0.1)).toBeCloseTo(0.125, 12); // ×1.25
		expect(servoNextLevel(target, [1, 1], 0.3, 0.1)).toBeCloseTo(0.4, 12); // capped at 4 × 0.1
		expect(servoNextLevel(target, [10.2, 10.2], 0.1, 0.1)).toBeNull(); // within 3 %
		expect(servoNextLevel(target, [null, null], 0.1, 0.1)).toBeNull();
		expect(isOnTarget(target, [10.5, 9.6])).toBe(true);
		expect(isOnTarget(target, [12, 12])).toBe(false);
	});
});
