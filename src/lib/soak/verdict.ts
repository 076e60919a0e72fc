// Judging a heat-soak run from its temperature readings: limit breaches, thermal steady state,
// gaps, the per-probe summary and the verdict. Pure, so the page (live alarm) and the server
// (the stored verdict) judge the same readings the same way.
import type { SoakLimits, SteadyCriterion } from './limits';
import { STEADY_CRITERION, thdnDbToPercent } from './limits';

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

export const isHeatsinkProbe = (probe: string) => probe.startsWith('heatsink');
/** Ambient drifts with the room, not with the unit: it is logged but not judged. */
export const isAmbientProbe = (probe: string) => probe.startsWith('ambient');

export type BreachKind = 'max-heatsink' | 'rise-rate' | 'left-right' | 'thdn';

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

function fmtTime(s: number): string {
	const total = Math.max(0, Math.round(s));
	const m = Math.floor(total / 60);
	const sec = total % 60;
	return `${m}:${String(sec).padStart(2, '0')}`;
}

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
		if (isHeatsinkProbe(probe)) {
			const hit = list.find((p) => p.c > limits.maxHeatsinkC);
			if (hit) {
				out.push({
					kind: 'max-heatsink',
					probe,
					t: hit.t,
					atS: hit.s,
					value: hit.c,
					limit: limits.maxHeatsinkC,
					message: `${probe} reached ${fmt(hit.c)} °C (limit ${fmt(limits.maxHeatsinkC)} °C) at ${fmtTime(hit.s)}`
				});
			}
		}
		if (!isAmbientProbe(probe)) {
			for (let i = 0; i < list.length; i++) {
				const j = lastAtOrBefore(list, list[i].s - limits.riseWindowS);
				if (j < 0) continue;
				const minutes = (list[i].s - list[j].s) / 60;
				if (minutes <= 0) continue;
				const rate = (list[i].c - list[j].c) / minutes;
				if (rate > limits.maxRiseCPerMin) {
					out.push({
						kind: 'rise-rate',
						probe,
						t: list[i].t,
						atS: list[i].s,
						value: rate,
						limit: limits.maxRiseCPerMin,
						message: `${probe} rose ${fmt(rate, 2)} °C/min (limit ${fmt(limits.maxRiseCPerMin, 2)} °C/min) at ${fmtTime(list[i].s)}`
					});
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
			const r = nearestByT(rightByT, l.t);
			if (!r || Math.abs(r.t - l.t) > tol) continue;
			const diff = Math.abs(l.c - r.c);
			if (diff > limits.maxDiffC) {
				const at = Math.max(l.t, r.t);
				const atS = soakSeconds(at, clock);
				out.push({
					kind: 'left-right',
					probe: 'heatsink-left/heatsink-right',
					t: at,
					atS,
					value: diff,
					limit: limits.maxDiffC,
					message: `Heatsinks differ by ${fmt(diff)} °C (limit ${fmt(limits.maxDiffC)} °C) at ${fmtTime(atS)}`
				});
				break;
			}
		}
	}

	if (limits.thdnCeilingDb !== null && limits.thdnCeilingDb !== undefined) {
		const ceilingDb = limits.thdnCeilingDb;
		const ceiling = thdnDbToPercent(ceilingDb);
		const hit = [...thdn].sort((a, b) => a.t - b.t).find((x) => x.thdnPercent > ceiling);
		if (hit) {
			const atS = soakSeconds(hit.t, clock);
			out.push({
				kind: 'thdn',
				probe: hit.channel ?? 'output',
				t: hit.t,
				atS,
				value: hit.thdnPercent,
				limit: ceiling,
				message: `THD+N ${fmt(hit.thdnPercent, 3)} % (ceiling ${fmt(ceiling, 3)} % = ${fmt(ceilingDb)} dB) at ${fmtTime(atS)}`
			});
		}
	}

	return out.sort((a, b) => a.t - b.t);
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
function medianIntervalS(byProbe: Map<string, Pt[]>): number {
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
