// The soak page's gap finder, kept as readings arrive: one tick per bridge seq (the latest time
// and its boot id), ordered by seq, and the gaps between neighbouring ticks. A new reading only
// changes the gaps beside its own tick, so a day-long run costs about one comparison per reading
// instead of sorting the whole record on every update. Answers what `findGaps` answers for the
// same readings.
import { findGaps, type Gap, type SoakReadingIn } from './verdict';

interface Tick {
	seq: number;
	t: number;
	bootId: string | null;
}

export class LiveGapFinder {
	#ticks: Tick[] = [];
	/** Gaps keyed by the seq of the tick they start after. */
	#gaps = new Map<number, Gap>();
	#list: Gap[] | null = [];

	constructor(readonly silenceMs = 10_000) {}

	/** Fold one reading in. */
	add(r: SoakReadingIn): void {
		const ticks = this.#ticks;
		// Readings mostly arrive in seq order: the end is the usual place.
		let i = ticks.length;
		if (i && ticks[i - 1].seq >= r.seq) {
			let lo = 0;
			let hi = ticks.length;
			while (lo < hi) {
				const mid = (lo + hi) >>> 1;
				if (ticks[mid].seq < r.seq) lo = mid + 1;
				else hi = mid;
			}
			i = lo;
		}
		const bootId = r.bootId ?? null;
		if (i < ticks.length && ticks[i].seq === r.seq) {
			// Another probe of a known tick: the tick's time is its latest reading's (as findGaps keeps it).
			if (r.t <= ticks[i].t) return;
			ticks[i] = { seq: r.seq, t: r.t, bootId };
		} else ticks.splice(i, 0, { seq: r.seq, t: r.t, bootId });
		this.#judge(i - 1);
		this.#judge(i);
	}

	/** The gap (if any) between tick i and tick i + 1. */
	#judge(i: number): void {
		const a = this.#ticks[i];
		if (!a) return;
		this.#gaps.delete(a.seq);
		this.#list = null;
		const b = this.#ticks[i + 1];
		if (!b) return;
		const [gap] = findGaps(
			[
				{ probe: '', seq: a.seq, t: a.t, celsius: 0, bootId: a.bootId },
				{ probe: '', seq: b.seq, t: b.t, celsius: 0, bootId: b.bootId }
			],
			this.silenceMs
		);
		if (gap) this.#gaps.set(a.seq, gap);
	}

	/** Every gap, in seq order (the same array until something changes). */
	gaps(): Gap[] {
		this.#list ??= [...this.#gaps.values()].sort((x, y) => x.fromSeq - y.fromSeq);
		return this.#list;
	}
}
