// A soak run's summary kept up to date as readings arrive, so reading a day-long run never
// re-reads its hundreds of thousands of readings. Each upload folds only its new readings in:
// per-probe max/final/count exactly, the chart's time buckets exactly, gaps between the ticks
// around the batch, breaches judged on the readings within one rise window (plus a margin) of
// the batch, and the steady-state search resumed where the last one stopped. The stored summary
// is the one source every figure of a run is read from (page, job list, verdict).
import { and, asc, eq, gte, lte, lt, gt, sql } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import type { SoakLimits } from '$lib/soak/soak-limits';
import { STEADY_CRITERION } from '$lib/soak/soak-limits';
import {
	findBreaches,
	findGaps,
	isAmbientProbe,
	seriesByProbe,
	soakSeconds,
	steadyStateS,
	summarize,
	type Breach,
	type SoakClock,
	type SoakReadingIn,
	type SoakSummary,
	type ThdnSample
} from '$lib/soak/verdict';
import { seriesBucket, type SeriesRun } from '$lib/soak/series';

export type Tx = Pick<Db, 'select' | 'insert' | 'update' | 'delete'>;
type RunRow = typeof table.soakRuns.$inferSelect;

/** What the incremental summary needs besides the summary itself. */
export interface SummaryState {
	/** Readings stored (judged or not). */
	readingCount: number;
	lastSeq: number | null;
	/** Seq of each probe's latest judged reading (the summary's `finalC`). */
	finalSeq?: Record<string, number>;
	/** Soak seconds from which the steady-state search resumes (earlier windows were judged unsteady). */
	steadyFromS?: number | null;
	/** Bridge time of the THD+N sample behind `thdnEndPercent`. */
	thdnEndT?: number | null;
}

/** Margin beyond one rise window around a batch: the reading a rate is measured against. */
const CONTEXT_MARGIN_MS = 60_000;

export function emptySummary(): SoakSummary {
	return {
		probes: {},
		steadyStateS: null,
		thdnEndPercent: null,
		breaches: [],
		gaps: [],
		coveredS: 0,
		incomplete: false
	};
}

export const clockOf = (row: RunRow): SoakClock => ({
	startedAtMs: row.startedAt.getTime(),
	timeScale: row.timeScale
});
export const seriesRunOf = (row: RunRow): SeriesRun => ({
	startedAtMs: row.startedAt.getTime(),
	durationS: row.durationS,
	timeScale: row.timeScale
});
/** Wall-clock ms at which a run's planned duration ends; readings after it are kept, not judged. */
export function plannedEndMs(row: Pick<RunRow, 'startedAt' | 'durationS' | 'timeScale'>): number {
	return row.startedAt.getTime() + (row.durationS * 1000) / row.timeScale;
}

const readingColumns = {
	probe: table.soakReadings.probe,
	seq: table.soakReadings.seq,
	t: table.soakReadings.t,
	celsius: table.soakReadings.celsius,
	bootId: table.soakReadings.bootId
};

function readingsBetween(tx: Tx, runId: number, fromT: number, toT: number): SoakReadingIn[] {
	return tx
		.select(readingColumns)
		.from(table.soakReadings)
		.where(
			and(
				eq(table.soakReadings.runId, runId),
				gte(table.soakReadings.t, fromT),
				lte(table.soakReadings.t, toT)
			)
		)
		.all();
}

/** The THD+N samples stored for a run (few: one every several seconds at most). */
export function thdnSamples(tx: Tx, runId: number): ThdnSample[] {
	const rows = tx
		.select({ at: table.soakEvents.at, detail: table.soakEvents.detail })
		.from(table.soakEvents)
		.where(and(eq(table.soakEvents.runId, runId), eq(table.soakEvents.kind, 'thdn')))
		.all();
	const out: ThdnSample[] = [];
	for (const r of rows) {
		const d = r.detail as { thdnPercent?: unknown; channel?: unknown } | null;
		if (d && typeof d.thdnPercent === 'number')
			out.push({
				t: r.at.getTime(),
				thdnPercent: d.thdnPercent,
				channel: typeof d.channel === 'string' ? d.channel : undefined
			});
	}
	return out;
}

/** Keep the earliest breach of each kind and probe. */
function mergeBreaches(into: Breach[], found: readonly Breach[]): Breach[] {
	const byKey = new Map(into.map((b) => [`${b.kind}|${b.probe}`, b]));
	for (const b of found) {
		const k = `${b.kind}|${b.probe}`;
		const prev = byKey.get(k);
		if (!prev || b.t < prev.t) byKey.set(k, b);
	}
	return [...byKey.values()].sort((a, b) => a.t - b.t);
}

/** Fold readings into the chart buckets: one upsert per touched bucket. */
function foldSeries(tx: Tx, row: RunRow, readings: readonly SoakReadingIn[]): void {
	const run = seriesRunOf(row);
	const acc = new Map<
		string,
		{ probe: string; bucket: number; n: number; sumC: number; minC: number; maxC: number }
	>();
	for (const r of readings) {
		const bucket = seriesBucket(run, r.t);
		const k = `${r.probe}|${bucket}`;
		const a = acc.get(k);
		if (a) {
			a.n++;
			a.sumC += r.celsius;
			a.minC = Math.min(a.minC, r.celsius);
			a.maxC = Math.max(a.maxC, r.celsius);
		} else acc.set(k, { probe: r.probe, bucket, n: 1, sumC: r.celsius, minC: r.celsius, maxC: r.celsius });
	}
	const rows = [...acc.values()].map((a) => ({ runId: row.id, ...a }));
	for (let i = 0; i < rows.length; i += 500) {
		tx.insert(table.soakSeries)
			.values(rows.slice(i, i + 500))
			.onConflictDoUpdate({
				target: [table.soakSeries.runId, table.soakSeries.probe, table.soakSeries.bucket],
				set: {
					n: sql`${table.soakSeries.n} + excluded.n`,
					sumC: sql`${table.soakSeries.sumC} + excluded.sum_c`,
					minC: sql`min(${table.soakSeries.minC}, excluded.min_c)`,
					maxC: sql`max(${table.soakSeries.maxC}, excluded.max_c)`
				}
			})
			.run();
	}
}

/** One row per bridge tick (seq) between two seqs, judged readings only: the input of the gap finder. */
function ticksBetween(
	tx: Tx,
	runId: number,
	fromSeq: number,
	toSeq: number,
	untilMs: number
): SoakReadingIn[] {
	return tx
		.select({
			probe: sql<string>`''`,
			seq: table.soakReadings.seq,
			t: sql<number>`max(${table.soakReadings.t})`,
			celsius: sql<number>`0`,
			bootId: table.soakReadings.bootId
		})
		.from(table.soakReadings)
		.where(
			and(
				eq(table.soakReadings.runId, runId),
				gte(table.soakReadings.seq, fromSeq),
				lte(table.soakReadings.seq, toSeq),
				lte(table.soakReadings.t, untilMs)
			)
		)
		.groupBy(table.soakReadings.seq)
		.orderBy(asc(table.soakReadings.seq))
		.all();
}

function neighbourSeq(
	tx: Tx,
	runId: number,
	seq: number,
	side: 'before' | 'after',
	untilMs: number
): number | null {
	const r = tx
		.select({
			seq:
				side === 'before'
					? sql<number | null>`max(${table.soakReadings.seq})`
					: sql<number | null>`min(${table.soakReadings.seq})`
		})
		.from(table.soakReadings)
		.where(
			and(
				eq(table.soakReadings.runId, runId),
				side === 'before' ? lt(table.soakReadings.seq, seq) : gt(table.soakReadings.seq, seq),
				lte(table.soakReadings.t, untilMs)
			)
		)
		.get();
	return r?.seq ?? null;
}

/**
 * Fold newly stored readings (already inserted) into the run's summary and chart. Returns the
 * new summary and state; the caller writes them with the row.
 */
export function foldReadings(
	tx: Tx,
	row: RunRow,
	limits: SoakLimits,
	current: { summary: SoakSummary; state: SummaryState },
	added: readonly SoakReadingIn[]
): { summary: SoakSummary; state: SummaryState } {
	const summary: SoakSummary = structuredClone(current.summary);
	const state: SummaryState = structuredClone(current.state);
	if (!added.length) return { summary, state };
	state.readingCount += added.length;
	for (const r of added) state.lastSeq = state.lastSeq === null ? r.seq : Math.max(state.lastSeq, r.seq);
	foldSeries(tx, row, added);

	const clock = clockOf(row);
	const untilMs = plannedEndMs(row);
	const judged = added.filter((r) => r.t <= untilMs).sort((a, b) => a.seq - b.seq);
	if (!judged.length) return { summary, state };

	// Per probe: count, first maximum (in seq order), latest reading.
	const finalSeq = (state.finalSeq ??= {});
	for (const r of judged) {
		const s = soakSeconds(r.t, clock);
		const p = summary.probes[r.probe];
		if (!p) {
			summary.probes[r.probe] = { maxC: r.celsius, maxAtS: s, finalC: r.celsius, finalAtS: s, readings: 1 };
			finalSeq[r.probe] = r.seq;
			continue;
		}
		p.readings++;
		if (r.celsius > p.maxC || (r.celsius === p.maxC && s < p.maxAtS)) {
			p.maxC = r.celsius;
			p.maxAtS = s;
		}
		if (r.seq > (finalSeq[r.probe] ?? -Infinity)) {
			finalSeq[r.probe] = r.seq;
			p.finalC = r.celsius;
			p.finalAtS = s;
		}
	}
	summary.coveredS = Math.max(0, ...Object.values(summary.probes).map((p) => p.finalAtS));

	// Gaps: the ticks from the one before the batch to the one after it, found again.
	const minSeq = judged[0].seq;
	const maxSeq = judged[judged.length - 1].seq;
	const lo = neighbourSeq(tx, row.id, minSeq, 'before', untilMs) ?? minSeq;
	const hi = neighbourSeq(tx, row.id, maxSeq, 'after', untilMs) ?? maxSeq;
	const ticks = ticksBetween(tx, row.id, lo, hi, untilMs);
	summary.gaps = [
		...summary.gaps.filter((g) => !(g.fromSeq >= lo && g.toSeq <= hi)),
		...findGaps(ticks)
	].sort((a, b) => a.fromSeq - b.fromSeq);

	// Breaches: the readings within a rise window (and a margin) of the batch, judged again.
	const windowMs = (limits.riseWindowS * 1000) / row.timeScale + CONTEXT_MARGIN_MS;
	let minT = Infinity;
	let maxT = -Infinity;
	for (const r of judged) {
		minT = Math.min(minT, r.t);
		maxT = Math.max(maxT, r.t);
	}
	const context = readingsBetween(tx, row.id, minT - windowMs, Math.min(untilMs, maxT + windowMs));
	summary.breaches = mergeBreaches(summary.breaches, findBreaches(context, limits, clock));

	// Steady state: resume the search where the last one stopped (windows before it were unsteady).
	if (summary.steadyStateS === null) {
		const windowWallMs = (STEADY_CRITERION.windowS * 1000) / row.timeScale;
		const fromS = state.steadyFromS ?? null;
		const fromT = fromS === null ? -Infinity : clock.startedAtMs + (fromS * 1000) / clock.timeScale - 1;
		// Never more than a few windows back: a probe that stopped reporting holds the search, and
		// re-reading the whole record on every upload would make a long run slow.
		const floorT = maxT - 3 * windowWallMs - 2 * CONTEXT_MARGIN_MS;
		const subset = readingsBetween(tx, row.id, Math.max(fromT, floorT), untilMs);
		const found = steadyStateS(subset, clock);
		if (found !== null) summary.steadyStateS = found;
		else {
			const lists = [...seriesByProbe(subset, clock)].filter(([p]) => !isAmbientProbe(p)).map(([, l]) => l);
			if (lists.length && lists.every((l) => l.length)) {
				const lastCommon = Math.min(...lists.map((l) => l[l.length - 1].s));
				state.steadyFromS = Math.max(fromS ?? -Infinity, lastCommon - STEADY_CRITERION.windowS);
			}
		}
	}
	return { summary, state };
}

/** Fold THD+N samples in: the closing figure (latest by time) and the ceiling breach. */
export function foldThdn(
	row: RunRow,
	limits: SoakLimits,
	current: { summary: SoakSummary; state: SummaryState },
	samples: readonly ThdnSample[]
): { summary: SoakSummary; state: SummaryState } {
	const summary: SoakSummary = structuredClone(current.summary);
	const state: SummaryState = structuredClone(current.state);
	const judged = samples.filter((x) => x.t <= plannedEndMs(row));
	for (const x of judged) {
		if (state.thdnEndT === undefined || state.thdnEndT === null || x.t >= state.thdnEndT) {
			state.thdnEndT = x.t;
			summary.thdnEndPercent = x.thdnPercent;
		}
	}
	summary.breaches = mergeBreaches(summary.breaches, findBreaches([], limits, clockOf(row), judged));
	return { summary, state };
}

/**
 * The summary and state of a run from everything stored: for a run stored before the summary
 * was kept incrementally (once), and for tests that compare the two.
 */
export function rebuildSummary(
	tx: Tx,
	row: RunRow,
	limits: SoakLimits
): { summary: SoakSummary; state: SummaryState } {
	const untilMs = plannedEndMs(row);
	const all = tx
		.select(readingColumns)
		.from(table.soakReadings)
		.where(eq(table.soakReadings.runId, row.id))
		.all();
	const judged = all.filter((r) => r.t <= untilMs);
	const thdn = thdnSamples(tx, row.id).filter((x) => x.t <= untilMs);
	const summary = summarize(judged, limits, clockOf(row), thdn);
	const finalSeq: Record<string, number> = {};
	for (const r of judged) finalSeq[r.probe] = Math.max(finalSeq[r.probe] ?? -Infinity, r.seq);
	const lastThdn = [...thdn].sort((a, b) => a.t - b.t).at(-1);
	return {
		summary,
		state: {
			readingCount: all.length,
			lastSeq: all.reduce<number | null>((m, r) => (m === null || r.seq > m ? r.seq : m), null),
			finalSeq,
			steadyFromS: null,
			thdnEndT: lastThdn?.t ?? null
		}
	};
}

/**
 * Close the summary at the end of a run: `complete` runs are judged against their planned
 * duration (a record that stops short by more than a few readings is incomplete).
 */
export function closeSummary(summary: SoakSummary, durationS: number, complete: boolean): SoakSummary {
	if (!complete) return { ...summary, incomplete: false };
	const counts = Object.values(summary.probes);
	const most = counts.reduce((m, p) => Math.max(m, p.readings), 0);
	// A few readings' worth of slack (at least a minute) for where the last reading falls.
	const spacingS = most > 1 ? summary.coveredS / (most - 1) : 0;
	const slackS = Math.max(60, 3 * spacingS);
	return { ...summary, incomplete: most === 0 || summary.coveredS < durationS - slackS };
}
