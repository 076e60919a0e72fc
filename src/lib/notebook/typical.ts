// Typical figures of a model: for each figure, the spread of the readings of repaired units of that
// model measured under the same conditions. Pure (the notebook, compare and snapshot pages and the
// CSV export share it). Quantiles are Hyndman & Fan's definition 7 (linear between order
// statistics, R's and NumPy's default); the spread shown is the interquartile range Q1–Q3.
import { CHANNEL_FIGURES, formatFigure, type FigureDef } from '../compare';

/** Fewer units than this and the notebook says "not enough units yet". */
export const MIN_UNITS = 3;

/** The figures the notebook summarises, in table order (defined once in $lib/compare). */
export const TYPICAL_METRIC_KEYS = [
	'levelVrms',
	'powerW',
	'gainDb',
	'thdPercent',
	'thdnPercent',
	'noiseDbv',
	'snrDb'
] as const;
export type TypicalMetricKey = (typeof TYPICAL_METRIC_KEYS)[number];
export const TYPICAL_METRICS: readonly FigureDef[] = TYPICAL_METRIC_KEYS.map((k) =>
	CHANNEL_FIGURES.find((f) => f.key === k)!
);

/**
 * Sample quantile, Hyndman & Fan (1996) definition 7: with the values sorted ascending and
 * h = (n − 1)·p, Q(p) = x[⌊h⌋] + (h − ⌊h⌋)·(x[⌊h⌋ + 1] − x[⌊h⌋]) (0-based). `sorted` must be sorted.
 */
export function quantile7(sorted: readonly number[], p: number): number {
	const n = sorted.length;
	if (n === 0) throw new RangeError('quantile of no values');
	if (!(p >= 0 && p <= 1)) throw new RangeError(`p must be within 0…1, got ${p}`);
	const h = (n - 1) * p;
	const lo = Math.floor(h);
	const hi = Math.min(n - 1, lo + 1);
	return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/** One reading: the unit (job) it came from and the value. */
export interface Reading {
	unitId: number;
	value: number;
}

export type Typical =
	| {
			enough: true;
			/** Distinct units (jobs) the readings came from. */
			units: number;
			/** Readings summarised (one per unit and channel). */
			readings: number;
			median: number;
			q1: number;
			q3: number;
			min: number;
			max: number;
	  }
	| { enough: false; units: number; readings: number };

/** Median, quartiles (definition 7) and range of the readings; "not enough" below MIN_UNITS units. */
export function summarise(readings: readonly Reading[]): Typical {
	const finite = readings.filter((r) => Number.isFinite(r.value));
	const units = new Set(finite.map((r) => r.unitId)).size;
	if (units < MIN_UNITS) return { enough: false, units, readings: finite.length };
	const v = finite.map((r) => r.value).sort((a, b) => a - b);
	return {
		enough: true,
		units,
		readings: v.length,
		median: quantile7(v, 0.5),
		q1: quantile7(v, 0.25),
		q3: quantile7(v, 0.75),
		min: v[0],
		max: v[v.length - 1]
	};
}

/** Where a reading sits against the typical range (Q1–Q3), or null without enough units. */
export function placement(value: number, t: Typical): 'below' | 'within' | 'above' | null {
	if (!t.enough || !Number.isFinite(value)) return null;
	return value < t.q1 ? 'below' : value > t.q3 ? 'above' : 'within';
}

const unitsText = (n: number) => `${n} unit${n === 1 ? '' : 's'}`;

/** The typical range as text: "0.0080–0.0150 %, median 0.0110 %, from 5 units". */
export function typicalText(def: Pick<FigureDef, 'unit'>, t: Typical): string {
	if (!t.enough) return `not enough units yet (${unitsText(t.units)}; ${MIN_UNITS} needed)`;
	return `${rangeText(def, t.q1, t.q3)}, median ${formatFigure(def, t.median)}, from ${unitsText(t.units)}`;
}

function rangeText(def: Pick<FigureDef, 'unit'>, a: number, b: number): string {
	const fa = formatFigure(def, a);
	const fb = formatFigure(def, b);
	// "0.0080–0.0150 %" when both read in the same unit, else each with its own.
	const ua = fa.split(' ').slice(1).join(' ');
	const ub = fb.split(' ').slice(1).join(' ');
	return ua === ub && ua ? `${fa.split(' ')[0]}–${fb}` : `${fa} – ${fb}`;
}

/**
 * Where one reading sits, as a sentence: "THD+N 0.0120 % — typical for this model is 0.0080–0.0150 %,
 * from 5 units (within)", or "… — not enough units yet".
 */
export function whereItSits(def: Pick<FigureDef, 'unit' | 'label'>, value: number, t: Typical): string {
	const reading = `${def.label} ${formatFigure(def, value)}`;
	if (!t.enough)
		return `${reading} — not enough units yet for this model (${unitsText(t.units)} so far; ${MIN_UNITS} needed)`;
	const where = placement(value, t);
	const note = where === 'within' ? 'within the typical range' : `${where} the typical range`;
	return `${reading} — typical for this model is ${rangeText(def, t.q1, t.q3)}, from ${unitsText(t.units)} (${note})`;
}

// ── a model's table ─────────────────────────────────────────────────────────

/** One figure of one channel of one unit's passing after-repair snapshot, with its conditions. */
export interface TypicalSample {
	unitId: number;
	snapshotId: number;
	/** Stable text key of the measuring conditions; readings are compared only within one. */
	conditionsKey: string;
	/** The conditions in words ("sine 1 kHz, 0.447 V rms, 8 Ω, 20 Hz–20 kHz, unweighted"). */
	conditionsLabel: string;
	metric: TypicalMetricKey;
	value: number;
}

export interface TypicalRow {
	metric: TypicalMetricKey;
	label: string;
	unit: string;
	typical: Typical;
}

export interface TypicalGroup {
	conditionsKey: string;
	conditionsLabel: string;
	/** Units with a passing after-repair snapshot under these conditions. */
	units: number;
	rows: TypicalRow[];
}

/** Most condition groups shown for one model (the most-measured first). */
export const MAX_TYPICAL_GROUPS = 6;

/** Group samples by conditions (most units first) and summarise each figure within each group. */
export function typicalGroups(samples: readonly TypicalSample[]): TypicalGroup[] {
	const byCond = new Map<string, { label: string; samples: TypicalSample[] }>();
	for (const s of samples) {
		const g = byCond.get(s.conditionsKey) ?? { label: s.conditionsLabel, samples: [] };
		g.samples.push(s);
		byCond.set(s.conditionsKey, g);
	}
	const groups: TypicalGroup[] = [];
	for (const [key, g] of byCond) {
		const rows: TypicalRow[] = [];
		for (const def of TYPICAL_METRICS) {
			const readings = g.samples.filter((s) => s.metric === def.key);
			if (!readings.length) continue;
			rows.push({
				metric: def.key as TypicalMetricKey,
				label: def.label,
				unit: def.unit,
				typical: summarise(readings)
			});
		}
		groups.push({
			conditionsKey: key,
			conditionsLabel: g.label,
			units: new Set(g.samples.map((s) => s.unitId)).size,
			rows
		});
	}
	groups.sort((a, b) => b.units - a.units || a.conditionsLabel.localeCompare(b.conditionsLabel));
	return groups.slice(0, MAX_TYPICAL_GROUPS);
}
