// A run's downsampled chart: readings fold into a fixed number of time buckets per probe as they
// arrive, so charting a day-long run reads a few thousand rows, never hundreds of thousands, and
// no reading time (however far from the run) can make the bucket count grow.
import { soakSeconds } from './verdict';

/** Buckets spanning the planned duration; the rest take an overrun, the last one everything later. */
export const SERIES_PLANNED_BUCKETS = 660;
export const SERIES_BUCKETS = 720;

export interface SeriesRun {
	startedAtMs: number;
	durationS: number;
	timeScale: number;
}

/** Wall-clock ms per bucket (the migration's backfill computes the same expression in SQL). */
export function seriesBucketMs(run: Pick<SeriesRun, 'durationS' | 'timeScale'>): number {
	return Math.max(1, Math.ceil((run.durationS * 1000) / run.timeScale / SERIES_PLANNED_BUCKETS));
}

/** The bucket a reading at bridge time `tMs` folds into, always in 0 … SERIES_BUCKETS − 1. */
export function seriesBucket(run: SeriesRun, tMs: number): number {
	const b = Math.floor((tMs - run.startedAtMs) / seriesBucketMs(run));
	return Math.min(SERIES_BUCKETS - 1, Math.max(0, Number.isFinite(b) ? b : 0));
}

export interface SeriesBucketRow {
	probe: string;
	bucket: number;
	n: number;
	sumC: number;
	minC: number;
	maxC: number;
}

/** The chart of a run: soak minutes at each bucket's middle and per probe the mean, min and max °C. */
export interface SoakSeries {
	minutes: number[];
	probes: Record<string, { meanC: (number | null)[]; minC: (number | null)[]; maxC: (number | null)[] }>;
}

/**
 * Bucket rows → a chart, merged `factor` buckets at a time (a thumbnail wants fewer points).
 * Every bucket from the first to the last present is a row, so a stretch without readings
 * breaks the line instead of joining across it.
 */
export function seriesOf(run: SeriesRun, rows: readonly SeriesBucketRow[], factor = 1): SoakSeries {
	const f = Math.max(1, Math.floor(factor));
	const merged = new Map<string, Map<number, { n: number; sum: number; min: number; max: number }>>();
	let first = Infinity;
	let last = -Infinity;
	for (const r of rows) {
		const b = Math.floor(r.bucket / f);
		first = Math.min(first, b);
		last = Math.max(last, b);
		let m = merged.get(r.probe);
		if (!m) merged.set(r.probe, (m = new Map()));
		const prev = m.get(b);
		if (prev) {
			prev.n += r.n;
			prev.sum += r.sumC;
			prev.min = Math.min(prev.min, r.minC);
			prev.max = Math.max(prev.max, r.maxC);
		} else m.set(b, { n: r.n, sum: r.sumC, min: r.minC, max: r.maxC });
	}
	if (!Number.isFinite(first)) return { minutes: [], probes: {} };
	const bucketMs = seriesBucketMs(run) * f;
	const clock = { startedAtMs: run.startedAtMs, timeScale: run.timeScale };
	const count = last - first + 1;
	const minutes = Array.from(
		{ length: count },
		(_, i) => soakSeconds(run.startedAtMs + (first + i + 0.5) * bucketMs, clock) / 60
	);
	const probes: SoakSeries['probes'] = {};
	for (const [probe, m] of merged) {
		const meanC: (number | null)[] = new Array(count).fill(null);
		const minC: (number | null)[] = new Array(count).fill(null);
		const maxC: (number | null)[] = new Array(count).fill(null);
		for (const [b, v] of m) {
			meanC[b - first] = v.sum / v.n;
			minC[b - first] = v.min;
			maxC[b - first] = v.max;
		}
		probes[probe] = { meanC, minC, maxC };
	}
	return { minutes, probes };
}

/**
 * The same downsampled chart built in the browser as readings arrive (one bucket update per
 * reading), so a long running soak is drawn from at most SERIES_BUCKETS rows per probe instead of
 * every reading. Answers what the server stores for the same readings.
 */
export class LiveSeriesBuilder {
	readonly #rows = new Map<string, SeriesBucketRow>();
	#cached: SoakSeries | null = null;

	constructor(readonly run: SeriesRun) {}

	add(r: { probe: string; t: number; celsius: number }): void {
		const bucket = seriesBucket(this.run, r.t);
		const k = `${r.probe}|${bucket}`;
		const row = this.#rows.get(k);
		if (row) {
			row.n++;
			row.sumC += r.celsius;
			row.minC = Math.min(row.minC, r.celsius);
			row.maxC = Math.max(row.maxC, r.celsius);
		} else
			this.#rows.set(k, { probe: r.probe, bucket, n: 1, sumC: r.celsius, minC: r.celsius, maxC: r.celsius });
		this.#cached = null;
	}

	/** Start from bucket rows already stored (a resumed run), then keep adding readings. */
	seed(rows: readonly SeriesBucketRow[]): void {
		for (const r of rows) {
			const k = `${r.probe}|${r.bucket}`;
			const row = this.#rows.get(k);
			if (row) {
				row.n += r.n;
				row.sumC += r.sumC;
				row.minC = Math.min(row.minC, r.minC);
				row.maxC = Math.max(row.maxC, r.maxC);
			} else this.#rows.set(k, { ...r });
		}
		this.#cached = null;
	}

	/** The bucket rows held (copies): what the server stores for the same readings. */
	rows(): SeriesBucketRow[] {
		return [...this.#rows.values()].map((r) => ({ ...r }));
	}

	series(): SoakSeries {
		this.#cached ??= seriesOf(this.run, [...this.#rows.values()]);
		return this.#cached;
	}
}
