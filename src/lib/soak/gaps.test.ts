// The page's incremental gap finder answers what the whole-record gap finder answers, whatever
// order the readings arrive in (live, backfilled late, repeated).
import { describe, expect, it } from 'vitest';
import { LiveGapFinder } from './gaps';
import { findGaps, type SoakReadingIn } from './verdict';

/** A deterministic pseudo-random sequence (mulberry32), so a failure can be replayed. */
function rng(seed: number) {
	return () => {
		seed |= 0;
		seed = (seed + 0x6d2b79f5) | 0;
		let t = Math.imul(seed ^ (seed >>> 15), 1 | seed);
		t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

function record(): SoakReadingIn[] {
	const out: SoakReadingIn[] = [];
	let t = 1_800_000_000_000;
	for (let seq = 1; seq <= 400; seq++) {
		// A 30 s silence at 100, a bridge restart at 250, otherwise one tick a second.
		t += seq === 100 ? 30_000 : 1000;
		const bootId = seq < 250 ? 'boot-a' : 'boot-b';
		for (const probe of ['heatsink-left', 'heatsink-right', 'ambient'])
			out.push({ probe, seq, t: t + (probe === 'ambient' ? 5 : 0), celsius: 30, bootId });
	}
	return out;
}

describe('LiveGapFinder', () => {
	it('finds the silence and the restart as they arrive in order', () => {
		const finder = new LiveGapFinder();
		for (const r of record()) finder.add(r);
		expect(finder.gaps().map((g) => [g.reason, g.fromSeq, g.toSeq])).toEqual([
			['silence', 99, 100],
			['bridge-restart', 249, 250]
		]);
		expect(finder.gaps()).toEqual(findGaps(record()));
	});

	it('answers what findGaps answers for shuffled, late and repeated readings', () => {
		const next = rng(42);
		const all = record();
		for (let round = 0; round < 5; round++) {
			const shuffled = [...all, ...all.slice(0, 200)].sort(() => next() - 0.5);
			const finder = new LiveGapFinder();
			const seen: SoakReadingIn[] = [];
			shuffled.forEach((r, i) => {
				finder.add(r);
				seen.push(r);
				// Compare along the way too: half-built records have gaps a later reading closes.
				if (i % 97 === 0) expect(finder.gaps()).toEqual(findGaps(seen));
			});
			expect(finder.gaps()).toEqual(findGaps(all));
		}
	});
});

describe('LiveSeriesBuilder', () => {
	it('builds, reading by reading, the chart the server stores for the same readings', async () => {
		const { LiveSeriesBuilder, seriesOf, seriesBucket, SERIES_BUCKETS } = await import('./series');
		const run = { startedAtMs: 1_800_000_000_000, durationS: 3600, timeScale: 1 };
		// Temperatures in quarter degrees: sums are exact in any order, so the comparison can be exact.
		const all = record().map((r) => ({ ...r, celsius: 30 + (r.seq % 7) * 0.25 }));
		const live = new LiveSeriesBuilder(run);
		for (const r of [...all].reverse()) live.add(r); // any order
		// The server's rows, summed independently per (probe, bucket).
		const rows = new Map<
			string,
			{ probe: string; bucket: number; n: number; sumC: number; minC: number; maxC: number }
		>();
		for (const r of all) {
			const bucket = seriesBucket(run, r.t);
			const k = `${r.probe}|${bucket}`;
			const x = rows.get(k) ?? { probe: r.probe, bucket, n: 0, sumC: 0, minC: Infinity, maxC: -Infinity };
			x.n++;
			x.sumC += r.celsius;
			x.minC = Math.min(x.minC, r.celsius);
			x.maxC = Math.max(x.maxC, r.celsius);
			rows.set(k, x);
		}
		expect(live.series()).toEqual(seriesOf(run, [...rows.values()]));
		expect(live.series().minutes.length).toBeLessThanOrEqual(SERIES_BUCKETS);
		// 3600 s over 660 buckets: ceil(3600000 / 660) = 5455 ms a bucket.
		expect(seriesBucket(run, run.startedAtMs + 5454)).toBe(0);
		expect(seriesBucket(run, run.startedAtMs + 5455)).toBe(1);
		expect(seriesBucket(run, run.startedAtMs - 1e12)).toBe(0); // clamped: never a negative bucket
		expect(seriesBucket(run, 8.64e15)).toBe(SERIES_BUCKETS - 1); // nor past the last
	});

	it('resumed from the rows stored so far, then fed the newer readings, draws the same chart', async () => {
		const { LiveSeriesBuilder } = await import('./series');
		const run = { startedAtMs: 1_800_000_000_000, durationS: 3600, timeScale: 1 };
		const all = record().map((r) => ({ ...r, celsius: 30 + (r.seq % 5) * 0.25 }));
		const whole = new LiveSeriesBuilder(run);
		for (const r of all) whole.add(r);
		// The server's rows for the first 60 % (as another builder would store them), then the rest live.
		const cut = Math.floor(all.length * 0.6);
		const stored = new LiveSeriesBuilder(run);
		for (const r of all.slice(0, cut)) stored.add(r);
		const rows = stored.rows();
		const resumed = new LiveSeriesBuilder(run);
		resumed.seed(rows);
		for (const r of all.slice(cut)) resumed.add(r);
		expect(resumed.series()).toEqual(whole.series());
	});
});
