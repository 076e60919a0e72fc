// Judging a heat-soak run from its temperature readings: limit breaches, thermal steady state,
// gaps, the per-probe summary and the verdict. Pure, so the page (live alarm) and the server
// (the stored verdict) judge the same readings the same way.
import type { SoakLimits, SteadyCriterion } from './soak-limits';
import { STEADY_CRITERION, thdnDbToPercent } from './soak-limits';
import { formatSoakTime } from './temperature';
import { probeLabel } from './probes';

export interface SoakReadingIn {
	probe: string;
	/** The bridge's sequence number, monotone across bridge restarts. */
	seq: number;
	/** Bridge clock, ms since the epoch. */
	t: number;
	celsius: number;
	bootId?: string | null;
}

export interface ThdnSample {
	/** Bridge/browser clock, ms since the epoch. */
	t: number;
	thdnPercent: number;
	channel?: string;
}

/**
 * Maps bridge time onto soak time. With a simulator at time scale 60, one wall-clock second
 * is a minute of thermal time, so every rate and duration is judged in soak time.
 */
export interface SoakClock {
	startedAtMs: number;
	timeScale: number;
}

export function soakSeconds(tMs: number, clock: SoakClock): number {
	return ((tMs - clock.startedAtMs) / 1000) * clock.timeScale;
}

/**
 * How a run on an accelerated clock is labelled wherever its verdict shows, so a demo soak is
 * never mistaken for a real one; null for a real-time run. The server accepts a time scale other
 * than 1 only from the bridge simulator.
 */
export function acceleratedLabel(timeScale: number): string | null {
	return timeScale === 1 ? null : `accelerated ×${Number(timeScale.toFixed(2))} (simulator)`;
}

export const isHeatsinkProbe = (probe: string) => probe.startsWith('heatsink');
/** Ambient drifts with the room, not with the unit: it is logged but not judged. */
export const isAmbientProbe = (probe: string) => probe.startsWith('ambient');

/** `output-dropout`: the output level fell away suddenly while driven (a protection relay opening). */
export type BreachKind = 'max-heatsink' | 'rise-rate' | 'left-right' | 'thdn' | 'output-dropout';

export interface Breach {
	kind: BreachKind;
	/** The probe (or pair, or channel) that broke the limit. */
	probe: string;
	/** When, on the bridge clock (ms epoch) and in soak seconds. */
	t: number;
	atS: number;
	value: number;
	limit: number;
	message: string;
}

interface Pt {
	t: number;
	s: number;
	c: number;
}

// One breach of each kind, built the same way by the whole-record check and the live watch.

function maxHeatsinkBreach(probe: string, p: Pt, limits: SoakLimits): Breach | null {
	if (!isHeatsinkProbe(probe) || !(p.c > limits.maxHeatsinkC)) return null;
	return {
		kind: 'max-heatsink',
		probe,
		t: p.t,
		atS: p.s,
		value: p.c,
		limit: limits.maxHeatsinkC,
		message: `${probeLabel(probe)} reached ${fmt(p.c)} °C (limit ${fmt(limits.maxHeatsinkC)} °C) at ${formatSoakTime(p.s)}`
	};
}

/** The rise rate at list[i] against the latest reading at least one window earlier. */
function riseRateBreach(probe: string, list: readonly Pt[], i: number, limits: SoakLimits): Breach | null {
	const j = lastAtOrBefore(list, list[i].s - limits.riseWindowS);
	if (j < 0) return null;
	const minutes = (list[i].s - list[j].s) / 60;
	if (minutes <= 0) return null;
	const rate = (list[i].c - list[j].c) / minutes;
	if (!(rate > limits.maxRiseCPerMin)) return null;
	return {
		kind: 'rise-rate',
		probe,
		t: list[i].t,
		atS: list[i].s,
		value: rate,
		limit: limits.maxRiseCPerMin,
		message: `${probeLabel(probe)} rose ${fmt(rate, 2)} °C/min (limit ${fmt(limits.maxRiseCPerMin, 2)} °C/min) at ${formatSoakTime(list[i].s)}`
	};
}

/** The left heatsink reading `l` against the nearest right reading in time. */
function pairBreach(
	l: Pt,
	rightByT: readonly Pt[],
	limits: SoakLimits,
	clock: SoakClock,
	tolMs: number
): Breach | null {
	const r = nearestByT(rightByT, l.t);
	if (!r || Math.abs(r.t - l.t) > tolMs) return null;
	const diff = Math.abs(l.c - r.c);
	if (!(diff > limits.maxDiffC)) return null;
	const at = Math.max(l.t, r.t);
	const atS = soakSeconds(at, clock);
	return {
		kind: 'left-right',
		probe: 'heatsink-left/heatsink-right',
		t: at,
		atS,
		value: diff,
		limit: limits.maxDiffC,
		message: `Heatsinks differ by ${fmt(diff)} °C (limit ${fmt(limits.maxDiffC)} °C) at ${formatSoakTime(atS)}`
	};
}

/** The earliest THD+N sample above the ceiling (no sort: the first of the earliest wins, as a stable sort would). */
function thdnBreach(thdn: readonly ThdnSample[], limits: SoakLimits, clock: SoakClock): Breach | null {
	if (limits.thdnCeilingDb === null || limits.thdnCeilingDb === undefined) return null;
	const ceilingDb = limits.thdnCeilingDb;
	const ceiling = thdnDbToPercent(ceilingDb);
	let hit: ThdnSample | undefined;
	for (const x of thdn) if (x.thdnPercent > ceiling && (!hit || x.t < hit.t)) hit = x;
	if (!hit) return null;
	const atS = soakSeconds(hit.t, clock);
	return {
		kind: 'thdn',
		probe: hit.channel ?? 'output',
		t: hit.t,
		atS,
		value: hit.thdnPercent,
		limit: ceiling,
		message: `${hit.channel ? probeLabel(hit.channel) + ' ' : ''}THD+N ${fmt(hit.thdnPercent, 3)} % (ceiling ${fmt(ceiling, 3)} % = ${fmt(ceilingDb)} dB) at ${formatSoakTime(atS)}`
	};
}

/** Readings per probe, ordered by seq (the bridge's order), in soak seconds. */
export function seriesByProbe(readings: readonly SoakReadingIn[], clock: SoakClock): Map<string, Pt[]> {
	const sorted = [...readings].sort((a, b) => a.seq - b.seq || a.probe.localeCompare(b.probe));
	const out = new Map<string, Pt[]>();
	for (const r of sorted) {
		let list = out.get(r.probe);
		if (!list) out.set(r.probe, (list = []));
		list.push({ t: r.t, s: soakSeconds(r.t, clock), c: r.celsius });
	}
	return out;
}

const fmt = (x: number, digits = 1) => x.toFixed(digits);

/** Largest index i with list[i].s <= s, or -1. */
function lastAtOrBefore(list: readonly Pt[], s: number): number {
	let lo = 0;
	let hi = list.length - 1;
	let ans = -1;
	while (lo <= hi) {
		const mid = (lo + hi) >> 1;
		if (list[mid].s <= s) {
			ans = mid;
			lo = mid + 1;
		} else hi = mid - 1;
	}
	return ans;
}

export interface BreachOptions {
	/** Left/right readings further apart than this (bridge ms) are not compared. */
	pairToleranceMs?: number;
}

/**
 * Every limit breach, earliest first, at most one per kind and probe (the first time it
 * happened). The rise rate at a reading compares it with the latest reading at least one
 * window earlier, so it is only judged once a full window of data exists.
 */
export function findBreaches(
	readings: readonly SoakReadingIn[],
	limits: SoakLimits,
	clock: SoakClock,
	thdn: readonly ThdnSample[] = [],
	options: BreachOptions = {}
): Breach[] {
	const byProbe = seriesByProbe(readings, clock);
	const out: Breach[] = [];

	for (const [probe, list] of byProbe) {
		for (const p of list) {
			const b = maxHeatsinkBreach(probe, p, limits);
			if (b) {
				out.push(b);
				break;
			}
		}
		if (!isAmbientProbe(probe)) {
			for (let i = 0; i < list.length; i++) {
				const b = riseRateBreach(probe, list, i, limits);
				if (b) {
					out.push(b);
					break;
				}
			}
		}
	}

	const left = byProbe.get('heatsink-left');
	const right = byProbe.get('heatsink-right');
	if (left && right && left.length && right.length) {
		const tol = options.pairToleranceMs ?? 5000;
		const rightByT = [...right].sort((a, b) => a.t - b.t);
		for (const l of left) {
			const b = pairBreach(l, rightByT, limits, clock, tol);
			if (b) {
				out.push(b);
				break;
			}
		}
	}

	const thdnHit = thdnBreach(thdn, limits, clock);
	if (thdnHit) out.push(thdnHit);

	return out.sort((a, b) => a.t - b.t);
}

/**
 * The live page's limit check: keeps each probe's series ordered by seq as readings arrive
 * (appended in the usual case, inserted in place for a late backfill) and judges only what a
 * new reading can change, so a check costs about the new readings, not the whole record. Given
 * a record with no breach so far, `check` answers what `findBreaches` would for the whole record
 * (readings of one bridge have times that do not decrease with seq).
 */
export class LiveBreachWatch {
	readonly #series = new Map<string, (Pt & { seq: number })[]>();
	#unchecked: { probe: string; seq: number }[] = [];

	constructor(
		readonly limits: SoakLimits,
		readonly clock: SoakClock,
		readonly options: BreachOptions = {}
	) {}

	add(r: SoakReadingIn): void {
		let list = this.#series.get(r.probe);
		if (!list) this.#series.set(r.probe, (list = []));
		const p = { t: r.t, s: soakSeconds(r.t, this.clock), c: r.celsius, seq: r.seq };
		const at = seqUpperBound(list, r.seq);
		if (at > 0 && list[at - 1].seq === r.seq) return;
		if (at === list.length) list.push(p);
		else list.splice(at, 0, p);
		this.#unchecked.push({ probe: r.probe, seq: r.seq });
	}

	/** Breaches the readings added since the last check bring (with THD+N over all `thdn`), earliest first. */
	check(thdn: readonly ThdnSample[] = []): Breach[] {
		const limits = this.limits;
		const unchecked = this.#unchecked;
		this.#unchecked = [];
		// The first (in seq order) breach of each kind and probe, as the whole-record check reports.
		const first = new Map<string, { index: number; breach: Breach }>();
		const note = (index: number, b: Breach | null) => {
			if (!b) return;
			const k = `${b.kind}|${b.probe}`;
			const prev = first.get(k);
			if (!prev || index < prev.index) first.set(k, { index, breach: b });
		};
		const rightByT = this.#series.get('heatsink-right') ?? [];
		const left = this.#series.get('heatsink-left') ?? [];
		const tol = this.options.pairToleranceMs ?? 5000;
		const pairAt = (i: number) => note(i, pairBreach(left[i], rightByT, limits, this.clock, tol));

		for (const { probe, seq } of unchecked) {
			const list = this.#series.get(probe) as (Pt & { seq: number })[];
			const k = seqUpperBound(list, seq) - 1;
			note(k, maxHeatsinkBreach(probe, list[k], limits));
			if (!isAmbientProbe(probe)) {
				note(k, riseRateBreach(probe, list, k, limits));
				// Later readings whose window now starts at this one: S_i − window in [S_k, S_k+1).
				const nextS = k + 1 < list.length ? list[k + 1].s : Infinity;
				for (let i = firstWindowFrom(list, k, limits.riseWindowS); i < list.length; i++) {
					if (list[i].s - limits.riseWindowS >= nextS) break;
					note(i, riseRateBreach(probe, list, i, limits));
				}
			}
			if (!left.length || !rightByT.length) continue;
			if (probe === 'heatsink-left') pairAt(k);
			else if (probe === 'heatsink-right') {
				// Left readings whose nearest right reading may now be this one: between its neighbours in time.
				const fromT = k > 0 ? rightByT[k - 1].t : -Infinity;
				const toT = k + 1 < rightByT.length ? rightByT[k + 1].t : Infinity;
				for (let i = Math.max(0, lastAtOrBeforeT(left, fromT)); i < left.length && left[i].t <= toT; i++)
					if (left[i].t >= fromT) pairAt(i);
			}
		}
		const out = [...first.values()].map((x) => x.breach);
		const thdnHit = thdnBreach(thdn, limits, this.clock);
		if (thdnHit) out.push(thdnHit);
		return out.sort((a, b) => a.t - b.t);
	}
}

/** Index just past the last element with seq ≤ `seq`. */
function seqUpperBound(list: readonly { seq: number }[], seq: number): number {
	let lo = 0;
	let hi = list.length;
	// Readings mostly arrive in order: the end is the usual answer.
	if (!hi || list[hi - 1].seq <= seq) return hi;
	while (lo < hi) {
		const mid = (lo + hi) >>> 1;
		if (list[mid].seq <= seq) lo = mid + 1;
		else hi = mid;
	}
	return lo;
}

/** First index i > k with list[i].s − window ≥ list[k].s (its window can start at k). */
function firstWindowFrom(list: readonly Pt[], k: number, windowS: number): number {
	let lo = k + 1;
	let hi = list.length;
	while (lo < hi) {
		const mid = (lo + hi) >>> 1;
		if (list[mid].s - windowS >= list[k].s) hi = mid;
		else lo = mid + 1;
	}
	return lo;
}

/** Largest index with t ≤ `t` (−1 when none). */
function lastAtOrBeforeT(list: readonly Pt[], t: number): number {
	let lo = 0;
	let hi = list.length - 1;
	let ans = -1;
	while (lo <= hi) {
		const mid = (lo + hi) >> 1;
		if (list[mid].t <= t) {
			ans = mid;
			lo = mid + 1;
		} else hi = mid - 1;
	}
	return ans;
}

function nearestByT(list: readonly Pt[], t: number): Pt | undefined {
	let lo = 0;
	let hi = list.length - 1;
	while (lo < hi) {
		const mid = (lo + hi) >> 1;
		if (list[mid].t < t) lo = mid + 1;
		else hi = mid;
	}
	const a = list[lo];
	const b = lo > 0 ? list[lo - 1] : undefined;
	if (!a) return b;
	if (b && Math.abs(b.t - t) <= Math.abs(a.t - t)) return b;
	return a;
}

/**
 * Seconds of soak time from the start until thermal steady state: the start of the first
 * window of `windowS` in which every unit probe (ambient excluded) stays within `bandC`.
 * The window must be covered by data for every probe, without a gap (no two readings, nor a
 * reading and the window's edge, further apart than `maxSpacingS`); null when there is none.
 */
export function steadyStateS(
	readings: readonly SoakReadingIn[],
	clock: SoakClock,
	criterion: SteadyCriterion = STEADY_CRITERION
): number | null {
	const series = new Map([...seriesByProbe(readings, clock)].filter(([p]) => !isAmbientProbe(p)));
	const byProbe = [...series.values()];
	if (!byProbe.length || byProbe.some((l) => !l.length)) return null;
	// A stretch without readings (a bridge restart, a silence) is not evidence of anything.
	const maxSpacingS = Math.max(3 * medianIntervalS(series), criterion.windowS / 10);
	const lastCommon = Math.min(...byProbe.map((l) => l[l.length - 1].s));
	const candidates = [...new Set(byProbe.flatMap((l) => l.map((p) => p.s)))].sort((a, b) => a - b);
	for (const start of candidates) {
		const end = start + criterion.windowS;
		if (end > lastCommon) return null;
		let steady = true;
		for (const list of byProbe) {
			let lo = Infinity;
			let hi = -Infinity;
			let prevS = start;
			for (
				let i = Math.max(0, lastAtOrBefore(list, start - 1e-9) + 1);
				i < list.length && list[i].s <= end;
				i++
			) {
				if (list[i].s - prevS > maxSpacingS) break;
				prevS = list[i].s;
				lo = Math.min(lo, list[i].c);
				hi = Math.max(hi, list[i].c);
			}
			if (end - prevS > maxSpacingS || hi - lo > criterion.bandC) {
				steady = false;
				break;
			}
		}
		if (steady) return Math.max(0, start);
	}
	return null;
}

export interface Gap {
	/** Last reading before and first reading after, bridge clock ms. */
	fromT: number;
	toT: number;
	fromSeq: number;
	toSeq: number;
	reason: 'bridge-restart' | 'silence';
	fromBootId?: string | null;
	toBootId?: string | null;
}

/**
 * Breaks in the record: a change of the bridge's boot id (a restart) or a silence much longer
 * than the usual spacing between readings.
 */
export function findGaps(readings: readonly SoakReadingIn[], silenceMs = 10_000): Gap[] {
	const ticks = new Map<number, SoakReadingIn>();
	for (const r of readings)
		if (!ticks.has(r.seq) || r.t > (ticks.get(r.seq) as SoakReadingIn).t) ticks.set(r.seq, r);
	const seq = [...ticks.values()].sort((a, b) => a.seq - b.seq);
	const gaps: Gap[] = [];
	for (let i = 1; i < seq.length; i++) {
		const a = seq[i - 1];
		const b = seq[i];
		const restart = (a.bootId ?? null) !== (b.bootId ?? null) && a.bootId != null && b.bootId != null;
		if (restart || b.t - a.t > silenceMs) {
			gaps.push({
				fromT: a.t,
				toT: b.t,
				fromSeq: a.seq,
				toSeq: b.seq,
				reason: restart ? 'bridge-restart' : 'silence',
				fromBootId: a.bootId ?? null,
				toBootId: b.bootId ?? null
			});
		}
	}
	return gaps;
}

export interface ProbeSummary {
	maxC: number;
	maxAtS: number;
	finalC: number;
	finalAtS: number;
	readings: number;
}

export interface SoakSummary {
	probes: Record<string, ProbeSummary>;
	steadyStateS: number | null;
	/** The last THD+N sample of the run, when THD+N was watched. */
	thdnEndPercent: number | null;
	breaches: Breach[];
	gaps: Gap[];
	/** Soak seconds covered by readings (the latest reading). */
	coveredS: number;
	/**
	 * True when the record stops short of the planned duration by more than a few readings
	 * (only judged when the duration is given): a run cannot pass on evidence it does not have.
	 */
	incomplete: boolean;
}

export interface SummaryOptions {
	/** The planned duration: the record must reach it (within a few readings) for the run to pass. */
	durationS?: number;
	criterion?: SteadyCriterion;
}

/** Median spacing between one probe's readings, soak seconds (0 with fewer than two). */
export function medianIntervalS(byProbe: Map<string, Pt[]>): number {
	const list = [...byProbe.values()].sort((a, b) => b.length - a.length)[0] ?? [];
	const d = list
		.slice(1)
		.map((p, i) => p.s - list[i].s)
		.sort((a, b) => a - b);
	return d.length ? d[Math.floor(d.length / 2)] : 0;
}

export function summarize(
	readings: readonly SoakReadingIn[],
	limits: SoakLimits,
	clock: SoakClock,
	thdn: readonly ThdnSample[] = [],
	options: SummaryOptions = {}
): SoakSummary {
	const criterion = options.criterion ?? STEADY_CRITERION;
	const probes: Record<string, ProbeSummary> = {};
	let coveredS = 0;
	const byProbe = seriesByProbe(readings, clock);
	for (const [probe, list] of byProbe) {
		let max = list[0];
		for (const p of list) if (p.c > max.c) max = p;
		const last = list[list.length - 1];
		probes[probe] = { maxC: max.c, maxAtS: max.s, finalC: last.c, finalAtS: last.s, readings: list.length };
		coveredS = Math.max(coveredS, last.s);
	}
	const lastThdn = [...thdn].sort((a, b) => a.t - b.t).at(-1);
	// A few readings' worth of slack (at least a minute) for where the last reading falls.
	const slackS = Math.max(60, 3 * medianIntervalS(byProbe));
	const incomplete =
		options.durationS !== undefined && (readings.length === 0 || coveredS < options.durationS - slackS);
	return {
		probes,
		steadyStateS: steadyStateS(readings, clock, criterion),
		thdnEndPercent: lastThdn ? lastThdn.thdnPercent : null,
		breaches: findBreaches(readings, limits, clock, thdn),
		gaps: findGaps(readings),
		coveredS,
		incomplete
	};
}

/** A finished run passes when its stored record is complete and shows no breach. */
export function verdictOf(summary: SoakSummary): 'passed' | 'failed' {
	return summary.breaches.length || summary.incomplete ? 'failed' : 'passed';
}
