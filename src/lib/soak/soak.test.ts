// Sources named beside the checks are described in tests/REFERENCES.md § Heat soak.
// Soak presets, temperature units and the verdict logic on synthetic series whose answers are
// worked out by hand in the comments beside each check.
import { describe, expect, it } from 'vitest';
import { computeDrive, customDriveSchema } from './presets';
import { runLimits, thdnDbToPercent, thdnPercentToDb, type SoakLimits } from './soak-limits';
import { DEFAULT_SOAK_LIMITS } from '$lib/schemas/settings';
import {
	acceleratedLabel,
	findBreaches,
	findGaps,
	LiveBreachWatch,
	steadyStateS,
	summarize,
	verdictOf,
	type SoakReadingIn,
	type ThdnSample
} from './verdict';
import { deltaToUnit, formatSoakTime, formatTemp, fromUnit, toUnit } from './temperature';

const T0 = 1_700_000_000_000;
const clock = { startedAtMs: T0, timeScale: 1 };

/** One reading per minute of soak time (timeScale 1: 60 000 ms apart), seq shared per minute. */
function perMinute(
	probe: string,
	temps: number[],
	opts: { seqBase?: number; msPerStep?: number } = {}
): SoakReadingIn[] {
	const step = opts.msPerStep ?? 60_000;
	return temps.map((celsius, i) => ({ probe, seq: (opts.seqBase ?? 0) + i + 1, t: T0 + i * step, celsius }));
}

const limits: SoakLimits = {
	maxHeatsinkC: 75,
	maxRiseCPerMin: 5,
	riseWindowS: 60,
	maxDiffC: 10,
	thdnCeilingDb: null
};

describe('presets', () => {
	it('one-eighth of 100 W into 8 Ω is 12.5 W, 10 V rms', () => {
		const r = computeDrive('eighth-power-60', { ratedPowerW: 100, ratedLoadOhms: 8 });
		expect(r.ok).toBe(true);
		if (!r.ok) return;
		expect(r.drive.drivePowerW).toBeCloseTo(12.5, 9); // 100 / 8
		expect(r.drive.driveVrms).toBeCloseTo(10, 9); // √(12.5 W × 8 Ω) = √100
		expect(r.drive.durationS).toBe(3600); // 16 CFR 432 (2000 amendment): one hour
		expect(r.drive.frequencyHz).toBe(1000); // 16 CFR 432: 1 kHz sine
		expect(r.drive.channels).toEqual(['left', 'right']);
	});

	it('one-third of 120 W into 8 Ω is 40 W, 17.889 V rms', () => {
		const r = computeDrive('third-power-60', { ratedPowerW: 120, ratedLoadOhms: 8 });
		if (!r.ok) throw new Error(r.message);
		expect(r.drive.drivePowerW).toBeCloseTo(40, 9); // 120 / 3
		expect(r.drive.driveVrms).toBeCloseTo(17.8885, 4); // √(40 × 8) = √320
	});

	it('custom volts into the load give watts by P = V²/R', () => {
		const custom = customDriveSchema.parse({ volts: 20, loadOhms: 8, durationS: 1800, channels: ['left'] });
		const r = computeDrive('custom', { ratedPowerW: null, ratedLoadOhms: null }, custom);
		if (!r.ok) throw new Error(r.message);
		expect(r.drive.drivePowerW).toBeCloseTo(50, 9); // REFERENCES §5: 20 V into 8 Ω = 50 W
		expect(r.drive.channels).toEqual(['left']);
		expect(r.drive.frequencyHz).toBe(1000);
	});

	it('custom watts take the job load when none is given', () => {
		const custom = customDriveSchema.parse({ watts: 25, frequencyHz: 400 });
		const r = computeDrive('custom', { ratedPowerW: 60, ratedLoadOhms: 4 }, custom);
		if (!r.ok) throw new Error(r.message);
		expect(r.drive.loadOhms).toBe(4);
		expect(r.drive.driveVrms).toBeCloseTo(10, 9); // √(25 × 4)
	});

	it('refuses a fixed preset without a rating, and custom with both watts and volts', () => {
		const r = computeDrive('eighth-power-60', { ratedPowerW: null, ratedLoadOhms: 8 });
		expect(r.ok).toBe(false);
		expect(customDriveSchema.safeParse({ watts: 5, volts: 5 }).success).toBe(false);
		expect(customDriveSchema.safeParse({ frequencyHz: 1000 }).success).toBe(false);
	});
});

describe('temperature units', () => {
	it('converts °C and °F', () => {
		expect(toUnit(0, 'F')).toBeCloseTo(32, 12); // NIST SP 811 (2008) App. B: t/°F = 1.8·t/°C + 32 (clause from memory)
		expect(toUnit(100, 'F')).toBeCloseTo(212, 12); // same relation: water boils at 212 °F
		expect(toUnit(-40, 'F')).toBeCloseTo(-40, 12); // the one point where the scales meet (same relation)
		expect(fromUnit(98.6, 'F')).toBeCloseTo(37, 12); // (98.6 − 32) / 1.8
		expect(toUnit(55, 'C')).toBe(55);
		expect(deltaToUnit(10, 'F')).toBeCloseTo(18, 12); // a difference scales by 1.8, no offset
		expect(formatTemp(75, 'F')).toBe('167.0 °F'); // 75 × 1.8 + 32
		expect(formatTemp(null, 'C')).toBe('—');
		expect(formatSoakTime(3725)).toBe('1:02:05');
	});
});

describe('run limits from the shop setting', () => {
	it('takes the shop defaults and the changes made for this run', () => {
		// The THD+N ceiling is watched unless a shop or a run turns it off.
		expect(runLimits(DEFAULT_SOAK_LIMITS)).toEqual({
			...DEFAULT_SOAK_LIMITS,
			thdnCeilingDb: -26,
			riseWindowS: 60
		});
		const l = runLimits(DEFAULT_SOAK_LIMITS, { maxHeatsinkC: 80, thdnCeilingDb: -50, maxDiffC: undefined });
		expect(l).toMatchObject({ maxHeatsinkC: 80, thdnCeilingDb: -50, maxDiffC: DEFAULT_SOAK_LIMITS.maxDiffC });
		expect(runLimits(DEFAULT_SOAK_LIMITS, { thdnCeilingDb: null }).thdnCeilingDb).toBeNull();
		expect(() => runLimits(DEFAULT_SOAK_LIMITS, { maxHeatsinkC: -5 })).toThrow();
	});
	it('converts a THD+N ceiling between dB and percent', () => {
		expect(thdnDbToPercent(-40)).toBeCloseTo(1, 12); // 20·lg(0.01) = −40 dB
		expect(thdnDbToPercent(-60)).toBeCloseTo(0.1, 12); // 20·lg(0.001) = −60 dB
		expect(thdnPercentToDb(0.5)).toBeCloseTo(-46.0206, 4); // 20·lg(0.005)
	});
});

describe('breaches', () => {
	it('rise rate over a one-minute window', () => {
		// minutes 0..4: 25, 27, 29, 33, 40 → rates 2, 2, 4, 7 °C/min; the first above 5 is at minute 4.
		const b = findBreaches(perMinute('heatsink-left', [25, 27, 29, 33, 40]), limits, clock);
		expect(b).toHaveLength(1);
		expect(b[0].kind).toBe('rise-rate');
		expect(b[0].atS).toBe(240);
		expect(b[0].value).toBeCloseTo(7, 9);
	});

	it('rise rate over a two-minute window averages', () => {
		// window 120 s: minute 2 (29−25)/2 = 2, minute 3 (33−27)/2 = 3, minute 4 (40−29)/2 = 5.5 > 5.
		const b = findBreaches(
			perMinute('heatsink-left', [25, 27, 29, 33, 40]),
			{ ...limits, riseWindowS: 120 },
			clock
		);
		expect(b.map((x) => [x.kind, x.atS])).toEqual([['rise-rate', 240]]);
		expect(b[0].value).toBeCloseTo(5.5, 9);
		// A 6 °C/min limit is not crossed by 5.5.
		expect(
			findBreaches(
				perMinute('heatsink-left', [25, 27, 29, 33, 40]),
				{ ...limits, riseWindowS: 120, maxRiseCPerMin: 6 },
				clock
			)
		).toEqual([]);
	});

	it('judges rise rate in soak time when the simulator runs 60× faster', () => {
		// The same series one wall-second apart at time scale 60 is one soak-minute apart: same answer.
		const fast = perMinute('heatsink-left', [25, 27, 29, 33, 40], { msPerStep: 1000 });
		const b = findBreaches(fast, limits, { startedAtMs: T0, timeScale: 60 });
		expect(b[0].atS).toBe(240);
		expect(b[0].value).toBeCloseTo(7, 9);
	});

	it('ignores a rise before a full window exists and ignores ambient', () => {
		// Readings 30 s apart: at 30 s there is no reading ≥ 60 s earlier, so the 10 °C jump is not judged.
		const early: SoakReadingIn[] = [
			{ probe: 'heatsink-left', seq: 1, t: T0, celsius: 25 },
			{ probe: 'heatsink-left', seq: 2, t: T0 + 30_000, celsius: 35 }
		];
		expect(findBreaches(early, limits, clock)).toEqual([]);
		// Ambient jumping 20 °C/min (a door opened) is logged, not judged.
		expect(findBreaches(perMinute('ambient', [20, 40, 20]), limits, clock)).toEqual([]);
	});

	it('maximum heatsink temperature applies to heatsinks only', () => {
		// right: 60, 70, 76 (> 75 at minute 2); transformer at 90 °C is not a heatsink.
		const readings = [
			...perMinute('heatsink-right', [60, 64, 76, 74]),
			...perMinute('transformer', [88, 89, 90, 90])
		];
		const b = findBreaches(readings, { ...limits, maxRiseCPerMin: 50 }, clock);
		expect(b.map((x) => [x.kind, x.probe, x.atS, x.value])).toEqual([
			['max-heatsink', 'heatsink-right', 120, 76]
		]);
	});

	it('left/right difference', () => {
		// diffs per minute: |40−40| = 0, |45−41| = 4, |50−39.5| = 10.5 > 10 at minute 2.
		const readings = [
			...perMinute('heatsink-left', [40, 45, 50]),
			...perMinute('heatsink-right', [40, 41, 39.5])
		];
		const b = findBreaches(readings, { ...limits, maxRiseCPerMin: 50 }, clock);
		expect(b).toHaveLength(1);
		expect(b[0].kind).toBe('left-right');
		expect(b[0].atS).toBe(120);
		expect(b[0].value).toBeCloseTo(10.5, 9);
	});

	it('THD+N ceiling when watched', () => {
		// samples 0.05, 0.3, 1.2 % at minutes 1, 2, 3 against −40 dB (= 1 %): the third breaks it.
		const thdn = [0.05, 0.3, 1.2].map((p, i) => ({ t: T0 + (i + 1) * 60_000, thdnPercent: p }));
		expect(findBreaches([], limits, clock, thdn)).toEqual([]); // not watched: null ceiling
		const b = findBreaches([], { ...limits, thdnCeilingDb: -40 }, clock, thdn);
		expect(b.map((x) => [x.kind, x.atS, x.value])).toEqual([['thdn', 180, 1.2]]);
		expect(b[0].limit).toBeCloseTo(1, 12);
		// −50 dB is 0.316 %: the 0.3 % sample at minute 2 stays under it, 1.2 % at minute 3 does not.
		expect(findBreaches([], { ...limits, thdnCeilingDb: -50 }, clock, thdn).map((x) => x.atS)).toEqual([180]);
		// −52 dB is 0.251 %: now the 0.3 % sample at minute 2 is the first over.
		expect(findBreaches([], { ...limits, thdnCeilingDb: -52 }, clock, thdn).map((x) => x.atS)).toEqual([120]);
	});
});

describe('the live limit watch', () => {
	it('finds a rise at an old reading when a late reading becomes the start of its window', () => {
		const watch = new LiveBreachWatch(limits, clock);
		// Minutes 0, 1, 3, 4 at 30 °C: at minute 3 the window reaches back to minute 1, no rise.
		for (const r of perMinute('heatsink-left', [30, 30, 30, 30, 30]).filter((r) => r.seq !== 3)) watch.add(r);
		expect(watch.check()).toEqual([]);
		// Minute 2 arrives late at 20 °C: minute 3 now rises (30 − 20) °C in 1 min = 10 °C/min > 5.
		watch.add({ probe: 'heatsink-left', seq: 3, t: T0 + 120_000, celsius: 20 });
		const got = watch.check();
		expect(got).toEqual([
			expect.objectContaining({ kind: 'rise-rate', t: T0 + 180_000, atS: 180, value: 10, limit: 5 })
		]);
		const all = [...perMinute('heatsink-left', [30, 30, 30, 30, 30]).filter((r) => r.seq !== 3)];
		all.push({ probe: 'heatsink-left', seq: 3, t: T0 + 120_000, celsius: 20 });
		expect(got).toEqual(findBreaches(all, limits, clock));
		// Checked once: nothing new, nothing reported again.
		expect(watch.check()).toEqual([]);
	});

	it('compares an old left reading with a right reading that arrives late', () => {
		const watch = new LiveBreachWatch(limits, clock);
		watch.add({ probe: 'heatsink-left', seq: 10, t: T0 + 1000, celsius: 50 });
		watch.add({ probe: 'heatsink-right', seq: 11, t: T0 + 1000, celsius: 49 });
		watch.add({ probe: 'heatsink-left', seq: 20, t: T0 + 30_000, celsius: 50 });
		expect(watch.check()).toEqual([]); // 1 °C apart; the second left is 29 s from any right (tolerance 5 s)
		watch.add({ probe: 'heatsink-right', seq: 21, t: T0 + 30_000, celsius: 35 });
		// |50 − 35| = 15 °C > 10 °C, at the later of the two readings.
		expect(watch.check()).toEqual([
			expect.objectContaining({ kind: 'left-right', t: T0 + 30_000, value: 15, limit: 10 })
		]);
	});

	it('reports what the whole-record check reports, batch by batch, with readings out of order', () => {
		// A small deterministic generator (LCG, Numerical Recipes constants) so every seed replays.
		let state = 1;
		const rand = () => (state = (Math.imul(state, 1664525) + 1013904223) >>> 0) / 2 ** 32;
		const sim = { startedAtMs: T0, timeScale: 60 };
		const watched: SoakLimits = {
			...limits,
			maxHeatsinkC: 70,
			maxRiseCPerMin: 3,
			maxDiffC: 6,
			thdnCeilingDb: -40
		};
		let breached = 0;
		let lateDeliveries = 0;
		for (let seed = 1; seed <= 40; seed++) {
			state = seed;
			const watch = new LiveBreachWatch(watched, sim);
			const probes = ['heatsink-left', 'heatsink-right', 'transformer', 'ambient'];
			const temp = [30, 30, 30, 23];
			const delivered: SoakReadingIn[] = [];
			const thdn: ThdnSample[] = [];
			let held: SoakReadingIn[] = [];
			let tick = 0;
			for (let round = 0; round < 400; round++) {
				const batch: SoakReadingIn[] = [];
				for (let n = 1 + Math.floor(rand() * 4); n > 0; n--, tick++) {
					probes.forEach((probe, i) => {
						temp[i] += (rand() - 0.45) * 0.6;
						// Now and then one reading is lost for a while (a probe glitch) and delivered later.
						if (rand() < 0.02) return;
						batch.push({
							probe,
							seq: 1000 + 4 * tick + i,
							t: T0 + 1000 * tick,
							celsius: Math.round(temp[i] * 100) / 100
						});
					});
					if (rand() < 0.01) thdn.push({ t: T0 + 1000 * tick, thdnPercent: rand() * 1.2 });
				}
				// Hold a whole batch back now and then and deliver it after a later one.
				if (!held.length && rand() < 0.05) {
					held = batch;
					continue;
				}
				const now = rand() < 0.3 && held.length ? [...batch, ...held] : batch;
				if (now !== batch) {
					held = [];
					lateDeliveries++;
				}
				for (const r of now) {
					delivered.push(r);
					watch.add(r);
				}
				const whole = findBreaches(delivered, watched, sim, thdn);
				const live = watch.check(thdn);
				expect(live, `seed ${seed} round ${round}`).toEqual(whole);
				if (whole.length) {
					breached++;
					break;
				}
			}
		}
		// The comparison meant something: most seeds reached a breach, and late batches happened.
		expect(breached).toBeGreaterThan(30);
		expect(lateDeliveries).toBeGreaterThan(10);
	});
});

describe('accelerated runs', () => {
	it('are labelled with their time scale; real-time runs are not', () => {
		expect(acceleratedLabel(60)).toBe('accelerated ×60 (simulator)');
		expect(acceleratedLabel(1)).toBeNull();
	});
});

describe('steady state', () => {
	// One reading per minute. Window 5 min (6 readings, ends inclusive), band 1 °C.
	const left = [30, 34, 37, 39, 40, 40.5, 40.8, 41.0, 41.1, 41.2, 41.2, 41.3, 41.3, 41.3, 41.3, 41.3];
	const trafo = [25, 26, 27, 28, 29, 30, 30.5, 30.8, 31.0, 31.1, 31.2, 31.2, 31.2, 31.2, 31.2, 31.2];
	// Ambient swings 3 °C the whole time: it must not stop steady state.
	const ambient = left.map((_, i) => (i % 2 ? 25 : 22));

	it('finds the first window where every unit probe stays within 1 °C', () => {
		// left: window from minute 5 spans 40.5..41.2 = 0.7 (ok), from minute 4 spans 40..41.2 = 1.2 (no).
		// transformer: from minute 5 spans 30..31.2 = 1.2 (no), from minute 6 spans 30.5..31.2 = 0.7 (ok).
		// Both hold first from minute 6 → 360 s.
		const readings = [
			...perMinute('heatsink-left', left),
			...perMinute('transformer', trafo),
			...perMinute('ambient', ambient)
		];
		expect(steadyStateS(readings, clock)).toBe(360);
	});

	it('needs the whole window covered by data', () => {
		// Data to minute 10 only: the window from minute 6 would end at minute 11, so not yet.
		const readings = [
			...perMinute('heatsink-left', left.slice(0, 11)),
			...perMinute('transformer', trafo.slice(0, 11))
		];
		expect(steadyStateS(readings, clock)).toBeNull();
		// With a 2 °C band the left probe settles from minute 3 (39..41.1 = 2.1 no) → minute 4 (40..41.2 = 1.2)
		// and the transformer from minute 4 (29..31.1 = 2.1 no) → minute 5 (30..31.2 = 1.2): 300 s.
		expect(steadyStateS(readings, clock, { bandC: 2, windowS: 300 })).toBe(300);
	});
});

describe('steady state across a gap', () => {
	it('does not count a window that has a hole in it', () => {
		// Minutes 0..4 rise 30, 35, 38, 39.5, 40; then nothing until minute 12 (a bridge restart);
		// then 41 flat from minute 12 to 20. Readings are a minute apart, so a hole is > 3 minutes.
		const mins = [0, 1, 2, 3, 4, 12, 13, 14, 15, 16, 17, 18, 19, 20];
		const temps = [30, 35, 38, 39.5, 40, 41, 41, 41, 41, 41, 41, 41, 41, 41];
		const readings = mins.map((m, i) => ({
			probe: 'heatsink-left',
			seq: i + 1,
			t: T0 + m * 60_000,
			celsius: temps[i]
		}));
		// Window from minute 3 (39.5..40 before the hole, 41 after) would look steady to a band of
		// 1.5 °C if the hole were ignored; it reaches minute 8 with its last reading at minute 4.
		// The first window without a hole is from minute 12 (41..41): 720 s.
		expect(steadyStateS(readings, clock, { bandC: 1.5, windowS: 300 })).toBe(720);
	});
});

describe('gaps, summary and verdict', () => {
	it('marks a bridge restart and a long silence', () => {
		const readings: SoakReadingIn[] = [1, 2, 3, 4, 5, 6].map((seq) => ({
			probe: 'heatsink-left',
			seq,
			// seq 6 arrives 30 s after seq 5 (silence); the others 1 s apart.
			t: T0 + (seq - 1) * 1000 + (seq === 6 ? 29_000 : 0),
			celsius: 30,
			bootId: seq <= 3 ? 'boot-a' : 'boot-b'
		}));
		const gaps = findGaps(readings);
		expect(gaps.map((g) => [g.reason, g.fromSeq, g.toSeq])).toEqual([
			['bridge-restart', 3, 4],
			['silence', 5, 6]
		]);
	});

	it('summarises max and final per probe and decides the verdict', () => {
		const readings = [
			...perMinute('heatsink-left', [30, 45, 52, 50]),
			...perMinute('heatsink-right', [30, 44, 49, 51])
		];
		const thdn = [
			{ t: T0 + 60_000, thdnPercent: 0.02 },
			{ t: T0 + 180_000, thdnPercent: 0.03 }
		];
		const s = summarize(readings, { ...limits, maxRiseCPerMin: 20 }, clock, thdn);
		expect(s.probes['heatsink-left']).toEqual({
			maxC: 52,
			maxAtS: 120,
			finalC: 50,
			finalAtS: 180,
			readings: 4
		});
		expect(s.probes['heatsink-right']).toEqual({
			maxC: 51,
			maxAtS: 180,
			finalC: 51,
			finalAtS: 180,
			readings: 4
		});
		expect(s.thdnEndPercent).toBe(0.03); // the last sample, at minute 3
		expect(s.coveredS).toBe(180);
		expect(verdictOf(s)).toBe('passed');
		// A 50 °C heatsink ceiling: left 52 at minute 2 and right 51 at minute 3 both break it.
		const failed = summarize(readings, { ...limits, maxHeatsinkC: 50, maxRiseCPerMin: 20 }, clock, thdn);
		expect(failed.breaches.map((b) => [b.probe, b.atS])).toEqual([
			['heatsink-left', 120],
			['heatsink-right', 180]
		]);
		expect(verdictOf(failed)).toBe('failed');
		// Planned 10 minutes but readings end at minute 3: 180 < 600 − max(60, 3 × 60) → incomplete.
		const short = summarize(readings, { ...limits, maxRiseCPerMin: 20 }, clock, thdn, { durationS: 600 });
		expect(short.incomplete).toBe(true);
		expect(verdictOf(short)).toBe('failed');
		// Planned 5 minutes: 180 ≥ 300 − 180, within three readings of the end → complete.
		expect(
			summarize(readings, { ...limits, maxRiseCPerMin: 20 }, clock, thdn, { durationS: 300 }).incomplete
		).toBe(false);
	});
});

describe('the basis of a rated power', () => {
	it('refuses music-power and total-power figures as the basis of a soak, saying what is needed', async () => {
		const { ratingBasisProblem } = await import('./presets');
		expect(ratingBasisProblem('continuous-per-channel')).toBeNull();
		expect(ratingBasisProblem(null)).toBeNull(); // no basis recorded: nothing to refuse
		expect(ratingBasisProblem('music')).toMatch(
			/music-power.*continuous power per channel, both channels driven, at a stated THD/
		);
		expect(ratingBasisProblem('total')).toMatch(/total for all channels.*Correct the rating/);
	});
});
