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
