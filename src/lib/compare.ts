// Comparing snapshots: which figures exist, which way is better for each, the change between two
// readings (in dB or % points), the limit checks that flipped and the measuring conditions that
// differ. Pure: the compare page and any later report run the same arithmetic. Figures are read
// defensively (a figure may be null or absent, with a reason) because stored results outlive
// the analysis code that wrote them.

import { formatLimitValue, OP_SYMBOLS, UNITS, type LimitOp, type Unit } from './limit-profiles';
import { db as dbText, hz, hzLabel, percent, volts, watts } from './measure-format';

// ── what a snapshot looks like to the comparison ────────────────────────────

/** A stored snapshot as read from `GET /api/snapshots/{id}` (only the fields used here; all optional). */
export interface ComparableSnapshot {
	id: number;
	label: string;
	stage?: string;
	createdAt?: string;
	sampleRateHz?: number;
	channelCount?: number;
	profileName?: string | null;
	loadOhms?: number | null;
	fullScaleVolts?: number;
	results?: unknown;
	checks?: unknown;
	settings?: unknown;
}

type Rec = Record<string, unknown>;
const isRec = (v: unknown): v is Rec => typeof v === 'object' && v !== null && !Array.isArray(v);
const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);
const str = (v: unknown): string | null => (typeof v === 'string' && v.length > 0 ? v : null);

// ── the metric table ────────────────────────────────────────────────────────

/** Which way a figure is better: lower, higher, nearer zero, or neither (a setting, not a quality). */
export type Better = 'lower' | 'higher' | 'zero' | 'none';

/**
 * How a change is expressed:
 * - `db`: the figure is already in dB (or dB-like); change = b − a, in dB;
 * - `amplitude`: a voltage-like linear figure; change = 20·lg(b/a) dB;
 * - `power`: a power; change = 10·lg(b/a) dB;
 * - `points`: a percentage; change = b − a in % points;
 * - `linear`: a plain difference in the figure's own unit (bits, Hz, V of DC offset).
 */
export type ChangeKind = 'db' | 'amplitude' | 'power' | 'points' | 'linear';

export interface FigureDef {
	key: string;
	label: string;
	/** Unit the figure is shown in (its stored base unit). */
	unit: string;
	better: Better;
	change: ChangeKind;
	group: 'level' | 'distortion' | 'noise' | 'harmonics' | 'steadiness' | 'stereo' | 'imd';
}

/** Per-channel figures shown only when at least one snapshot has them. */
export const OPTIONAL_FIGURES: ReadonlySet<string> = new Set([
	'powerW',
	'gainDb',
	'noiseWeightedDbv',
	'snDb',
	'snWeightedDb'
]);

/** Per-channel figures of the measurement core, in the order the table shows them. */
export const CHANNEL_FIGURES: readonly FigureDef[] = [
	{ key: 'frequencyHz', label: 'Frequency', unit: 'Hz', better: 'none', change: 'linear', group: 'level' },
	{ key: 'levelVrms', label: 'Level', unit: 'V rms', better: 'none', change: 'amplitude', group: 'level' },
	{ key: 'levelDbv', label: 'Level', unit: 'dBV', better: 'none', change: 'db', group: 'level' },
	{ key: 'levelDbu', label: 'Level', unit: 'dBu', better: 'none', change: 'db', group: 'level' },
	{ key: 'levelDbfs', label: 'Level', unit: 'dBFS', better: 'none', change: 'db', group: 'level' },
	// Power into the stated load: more is better (output capability, a weak channel recovered).
	{ key: 'powerW', label: 'Power into load', unit: 'W', better: 'higher', change: 'power', group: 'level' },
	{ key: 'gainDb', label: 'Gain', unit: 'dB', better: 'none', change: 'db', group: 'level' },
	{ key: 'thdPercent', label: 'THD', unit: '%', better: 'lower', change: 'points', group: 'distortion' },
	{ key: 'thdDb', label: 'THD', unit: 'dB', better: 'lower', change: 'db', group: 'distortion' },
	{ key: 'thdnPercent', label: 'THD+N', unit: '%', better: 'lower', change: 'points', group: 'distortion' },
	{ key: 'thdnDb', label: 'THD+N', unit: 'dB', better: 'lower', change: 'db', group: 'distortion' },
	{ key: 'sinadDb', label: 'SINAD', unit: 'dB', better: 'higher', change: 'db', group: 'distortion' },
	{ key: 'enob', label: 'ENOB', unit: 'bits', better: 'higher', change: 'linear', group: 'distortion' },
	{ key: 'noiseVrms', label: 'Noise', unit: 'V rms', better: 'lower', change: 'amplitude', group: 'noise' },
	{ key: 'noiseDbv', label: 'Noise', unit: 'dBV', better: 'lower', change: 'db', group: 'noise' },
	{ key: 'snrDb', label: 'SNR', unit: 'dB', better: 'higher', change: 'db', group: 'noise' },
	{
		key: 'noiseWeightedVrms',
		label: 'Noise (A-weighted)',
		unit: 'V rms',
		better: 'lower',
		change: 'amplitude',
		group: 'noise'
	},
	{
		key: 'snrWeightedDb',
		label: 'SNR (A-weighted)',
		unit: 'dB',
		better: 'higher',
		change: 'db',
		group: 'noise'
	},
	{
		key: 'noiseWeightedDbv',
		label: 'Noise (A-weighted)',
		unit: 'dBV',
		better: 'lower',
		change: 'db',
		group: 'noise'
	},
	// S/N against a stated reference output, measured without a stimulus (residual noise).
	{ key: 'snDb', label: 'S/N', unit: 'dB', better: 'higher', change: 'db', group: 'noise' },
	{
		key: 'snWeightedDb',
		label: 'S/N (A-weighted)',
		unit: 'dB',
		better: 'higher',
		change: 'db',
		group: 'noise'
	},
	// DC at the output: nearer 0 V is better (a drifting offset is a fault sign).
	{ key: 'dcVolts', label: 'DC offset', unit: 'V', better: 'zero', change: 'linear', group: 'noise' }
];

export const STEADINESS_FIGURES: readonly FigureDef[] = [
	{
		key: 'levelSpreadDb',
		label: 'Level spread',
		unit: 'dB',
		better: 'lower',
		change: 'db',
		group: 'steadiness'
	},
	{
		key: 'thdnSpreadDb',
		label: 'THD+N spread',
		unit: 'dB',
		better: 'lower',
		change: 'db',
		group: 'steadiness'
	},
	{
		key: 'levelStdDb',
		label: 'Level std. dev.',
		unit: 'dB',
		better: 'lower',
		change: 'db',
		group: 'steadiness'
	},
	{
		key: 'thdnStdDb',
		label: 'THD+N std. dev.',
		unit: 'dB',
		better: 'lower',
		change: 'db',
		group: 'steadiness'
	}
];

export const STEREO_FIGURES: readonly FigureDef[] = [
	// Stored as L − R; nearer 0 dB is better whichever side is louder.
	{ key: 'balanceDb', label: 'Balance (L − R)', unit: 'dB', better: 'zero', change: 'db', group: 'stereo' },
	// Negative dB re the driven channel: more negative is better.
	{ key: 'crosstalkDb', label: 'Crosstalk', unit: 'dB', better: 'lower', change: 'db', group: 'stereo' }
];

export const IMD_FIGURES: readonly FigureDef[] = [
	{ key: 'imdPercent', label: 'IMD', unit: '%', better: 'lower', change: 'points', group: 'imd' },
	{ key: 'imdDb', label: 'IMD', unit: 'dB', better: 'lower', change: 'db', group: 'imd' },
	{ key: 'd2Percent', label: 'IMD 2nd order', unit: '%', better: 'lower', change: 'points', group: 'imd' },
	{ key: 'd3Percent', label: 'IMD 3rd order', unit: '%', better: 'lower', change: 'points', group: 'imd' }
];

/** A harmonic's level re the fundamental: lower is better. */
export function harmonicDef(order: number): FigureDef {
	return {
		key: `h${order}`,
		label: `H${order}`,
		unit: 'dBc',
		better: 'lower',
		change: 'db',
		group: 'harmonics'
	};
}

/**
 * Changes smaller than this read as "same": about what a bench reading repeats to between two
 * captures of an unchanged unit (common practice). For % figures the same ratio applies
 * (|20·lg(b/a)| below it); for linear figures a unit-specific step.
 */
export const SAME_WITHIN_DB = 0.1;
const SAME_WITHIN_LINEAR: Record<string, number> = { bits: 0.02, Hz: 0.5, V: 1e-4 };

// ── change between two readings ─────────────────────────────────────────────

export type ChangeVerdict = 'better' | 'worse' | 'same' | 'higher' | 'lower' | 'not comparable';

export interface Change {
	/** b − a in dB, % points or the figure's unit; null when either side is missing or the ratio is undefined. */
	value: number | null;
	/** 'dB', '% points' or the figure's own unit. */
	unit: string;
	verdict: ChangeVerdict;
	/** Why the verdict is withheld although both values exist ("measured into another load"). */
	note?: string;
}

const lg = Math.log10;

/** The change from `a` (reference) to `b` for one figure, with its verdict in words. */
export function changeOf(
	def: Pick<FigureDef, 'better' | 'change' | 'unit'>,
	a: number | null,
	b: number | null
): Change {
	const unit =
		def.change === 'points'
			? '% points'
			: def.change === 'linear'
				? def.unit === 'V'
					? 'V'
					: def.unit
				: 'dB';
	if (a === null || b === null || !Number.isFinite(a) || !Number.isFinite(b))
		return { value: null, unit, verdict: 'not comparable' };
	let value: number | null;
	let same: boolean;
	switch (def.change) {
		case 'db':
			value = b - a;
			same = Math.abs(value) < SAME_WITHIN_DB;
			break;
		case 'amplitude':
		case 'power': {
			const k = def.change === 'amplitude' ? 20 : 10;
			// A ratio needs two positive values; 0 → x is an infinite change, shown as not comparable.
			value = a > 0 && b > 0 ? k * lg(b / a) : a === b ? 0 : null;
			same = value !== null && Math.abs(value) < SAME_WITHIN_DB;
			break;
		}
		case 'points':
			value = b - a;
			same = a === b || (a > 0 && b > 0 && Math.abs(20 * lg(b / a)) < SAME_WITHIN_DB);
			break;
		case 'linear':
			value = b - a;
			same = Math.abs(value) < (SAME_WITHIN_LINEAR[def.unit] ?? 1e-9);
			break;
	}
	if (value === null) return { value: null, unit, verdict: 'not comparable' };
	if (same) return { value, unit, verdict: 'same' };
	let improved: boolean;
	switch (def.better) {
		case 'lower':
			improved = b < a;
			break;
		case 'higher':
			improved = b > a;
			break;
		case 'zero':
			if (Math.abs(b) === Math.abs(a)) return { value, unit, verdict: 'same' };
			improved = Math.abs(b) < Math.abs(a);
			break;
		case 'none':
			return { value, unit, verdict: b > a ? 'higher' : 'lower' };
	}
	return { value, unit, verdict: improved ? 'better' : 'worse' };
}

/** "+1.23 dB", "−0.045 % points", "+0.5 bits" (typographic minus). */
export function formatChange(c: Change): string {
	if (c.value === null) return '—';
	const v = c.value;
	const abs = Math.abs(v);
	let digits: string;
	if (c.unit === '% points')
		digits = abs >= 1 ? abs.toFixed(2) : abs >= 0.01 ? abs.toFixed(4) : abs.toPrecision(2);
	else if (c.unit === 'V') {
		const mv = (abs * 1000).toFixed(2);
		return `${Number(mv) === 0 ? '±' : v < 0 ? '−' : '+'}${mv} mV`;
	} else digits = abs.toFixed(2);
	const sign = Number(digits) === 0 ? '±' : v < 0 ? '−' : '+';
	return `${sign}${digits} ${c.unit}`;
}

/** A figure with its unit for the screen: "1.234 mV rms", "0.0120 %", "−80.00 dBV", "—". */
export function formatFigure(def: Pick<FigureDef, 'unit'>, v: number | null): string {
	if (v === null || !Number.isFinite(v)) return '—';
	switch (def.unit) {
		case 'V rms': {
			const x = volts(v);
			return `${x.value} ${x.unit} rms`;
		}
		case 'V': {
			const x = volts(v);
			return `${x.value} ${x.unit}`;
		}
		case 'W': {
			const x = watts(v);
			return `${x.value} ${x.unit}`;
		}
		case '%':
			return `${percent(v)} %`;
		case 'Hz': {
			const x = hz(v);
			return `${x.value} ${x.unit}`;
		}
		case 'bits':
			return `${v.toFixed(2)} bits`;
		default:
			return `${dbText(v)} ${def.unit}`;
	}
}

// ── figures of one snapshot ─────────────────────────────────────────────────

/** One figure's value, or null with the reason it is missing (when the stored result gives one). */
export interface FigureValue {
	value: number | null;
	reason: string | null;
}

export interface ChannelView {
	channel: number;
	/** The stored channel result (unknown shape; read through `figure`). */
	raw: Rec;
	/** Why this channel has no measurable signal, when the analysis said so. */
	signalReason: string | null;
}

export function channelsOf(s: ComparableSnapshot): ChannelView[] {
	const r = isRec(s.results) ? s.results : {};
	const chans = Array.isArray(r.channels) ? r.channels : [];
	return chans.filter(isRec).map((c, i) => {
		const noSignal = c.signal === false || c.signal === 'none' || c.signal === 'absent';
		return {
			channel: num(c.channel) ?? i,
			raw: c,
			signalReason: str(c.signalReason) ?? (noSignal ? 'no signal' : null)
		};
	});
}

function reasonFor(c: Rec | undefined, key: string, fallback: string | null): string | null {
	if (!c) return fallback;
	const reasons = c.reasons ?? c.nullReasons;
	if (isRec(reasons) && str(reasons[key])) return reasons[key] as string;
	return str(c.signalReason) ?? fallback;
}

/** A per-channel figure (including harmonics `h2…` and steadiness keys). */
export function channelFigure(s: ComparableSnapshot, channel: number, key: string): FigureValue {
	const c = channelsOf(s).find((x) => x.channel === channel);
	if (!c) return { value: null, reason: 'channel not captured' };
	if (/^h\d+$/.test(key)) {
		const order = Number(key.slice(1));
		const hs = Array.isArray(c.raw.harmonics) ? c.raw.harmonics.filter(isRec) : [];
		const h = hs.find((x) => num(x.order) === order);
		const v = h ? num(h.levelDbc) : null;
		return { value: v, reason: v === null ? reasonFor(c.raw, key, 'outside the band') : null };
	}
	if (STEADINESS_FIGURES.some((f) => f.key === key)) {
		const r = isRec(s.results) ? s.results : {};
		const st = (Array.isArray(r.steadiness) ? r.steadiness.filter(isRec) : []).find(
			(x) => (num(x.channel) ?? -1) === channel
		);
		const v = st ? num(st[key]) : null;
		return {
			value: v,
			reason: v === null ? (st ? 'too few analysis frames' : 'not measured') : null
		};
	}
	const v = num(c.raw[key]);
	if (v !== null) return { value: v, reason: null };
	const missing: Record<string, string> = {
		powerW: 'no load stated',
		gainDb: 'no generator level stated'
	};
	return { value: null, reason: reasonFor(c.raw, key, missing[key] ?? 'not measured') };
}

/** A stereo figure (balance, crosstalk). */
export function stereoFigure(s: ComparableSnapshot, key: string): FigureValue {
	const r = isRec(s.results) ? s.results : {};
	const v = num(r[key]);
	if (v !== null) return { value: v, reason: null };
	const n = channelsOf(s).length;
	if (n < 2) return { value: null, reason: 'needs both channels' };
	return {
		value: null,
		reason: key === 'crosstalkDb' ? 'both channels driven (measured with one channel driven)' : 'not measured'
	};
}

/**
 * IMD results where measured: per channel (`channels[i].imd`, the measurement core's shape) or, for
 * records that stored it once, `results.imd` (one result or a list) counted as channel 0.
 */
export function imdOf(s: ComparableSnapshot): { channel: number; method: string; raw: Rec }[] {
	const out: { channel: number; method: string; raw: Rec }[] = [];
	for (const c of channelsOf(s))
		if (isRec(c.raw.imd))
			out.push({ channel: c.channel, method: str(c.raw.imd.method) ?? 'imd', raw: c.raw.imd });
	const r = isRec(s.results) ? s.results : {};
	const top = Array.isArray(r.imd) ? r.imd : r.imd != null ? [r.imd] : [];
	for (const x of top.filter(isRec)) {
		const method = str(x.method) ?? 'imd';
		if (!out.some((o) => o.channel === 0 && o.method === method)) out.push({ channel: 0, method, raw: x });
	}
	return out;
}

/** Why IMD could not be measured on a channel under an IMD stimulus (the core's `imdError`). */
export function imdErrorOf(s: ComparableSnapshot, channel: number): string | null {
	const c = channelsOf(s).find((x) => x.channel === channel);
	return c ? str(c.raw.imdError) : null;
}

export function imdFigure(s: ComparableSnapshot, channel: number, method: string, key: string): FigureValue {
	const found = imdOf(s).find((x) => x.channel === channel && x.method === method);
	if (!found) return { value: null, reason: imdErrorOf(s, channel) ?? 'not measured' };
	const v = num(found.raw[key]);
	return { value: v, reason: v === null ? reasonFor(found.raw, key, 'not measured') : null };
}

export function imdMethodLabel(method: string): string {
	return method === 'smpte' ? 'SMPTE' : method === 'twin-tone' ? 'twin-tone' : method;
}

// ── rows of the comparison table ────────────────────────────────────────────

export interface FigureRow {
	/** Stable id: `ch0:thdnPercent`, `stereo:balanceDb`, `imd:smpte:imdPercent`. */
	id: string;
	def: FigureDef;
	/** 'L', 'R', or null for stereo figures; IMD rows name their method. */
	scope: string | null;
	values: FigureValue[];
	/** Change of each snapshot against the first (the first's is null). */
	changes: (Change | null)[];
}

const CHANNEL_NAMES = ['L', 'R'];
export const channelName = (c: number): string => CHANNEL_NAMES[c] ?? `Ch ${c + 1}`;

/**
 * Every figure of the picked snapshots side by side, each later snapshot's change against the
 * first. A row appears when at least one snapshot has the figure (or, for the core per-channel
 * figures, always, so a missing figure shows as "—" with its reason).
 */
export function figureRows(snaps: readonly ComparableSnapshot[]): FigureRow[] {
	const rows: FigureRow[] = [];
	// Power depends on the load and gain on the generator level: under another one, the change is
	// shown but not judged better or worse.
	const conds = snaps.map(conditionsOf);
	const DEPENDS: Record<string, [string, string]> = {
		powerW: ['load', 'measured into another load'],
		gainDb: ['level', 'measured at another generator level']
	};
	const build = (
		id: string,
		def: FigureDef,
		scope: string | null,
		read: (s: ComparableSnapshot) => FigureValue
	) => {
		const values = snaps.map(read);
		const ref = values[0]?.value ?? null;
		const changes = values.map((v, i) => {
			if (i === 0) return null;
			const c = changeOf(def, ref, v.value);
			const dep = DEPENDS[def.key];
			if (dep && c.value !== null && conds[i][dep[0]] !== conds[0][dep[0]])
				return { ...c, verdict: 'not comparable' as const, note: dep[1] };
			return c;
		});
		rows.push({ id, def, scope, values, changes });
	};
	const channels = [...new Set(snaps.flatMap((s) => channelsOf(s).map((c) => c.channel)))].sort(
		(a, b) => a - b
	);
	const anyHas = (read: (s: ComparableSnapshot) => FigureValue) => snaps.some((s) => read(s).value !== null);

	for (const def of CHANNEL_FIGURES)
		for (const ch of channels) {
			const read = (s: ComparableSnapshot) => channelFigure(s, ch, def.key);
			// Figures that exist only under some conditions (a stated load or level, a reference for
			// S/N, a newer analysis) are left out when no picked snapshot has them.
			if (OPTIONAL_FIGURES.has(def.key) && !anyHas(read)) continue;
			build(`ch${ch}:${def.key}`, def, channelName(ch), read);
		}
	const orders = new Set<number>();
	for (const s of snaps)
		for (const c of channelsOf(s))
			for (const h of Array.isArray(c.raw.harmonics) ? c.raw.harmonics.filter(isRec) : []) {
				const o = num(h.order);
				if (o !== null) orders.add(o);
			}
	for (const order of [...orders].sort((a, b) => a - b))
		for (const ch of channels)
			build(`ch${ch}:h${order}`, harmonicDef(order), channelName(ch), (s) =>
				channelFigure(s, ch, `h${order}`)
			);
	for (const def of STEADINESS_FIGURES)
		for (const ch of channels)
			build(`ch${ch}:${def.key}`, def, channelName(ch), (s) => channelFigure(s, ch, def.key));
	for (const def of STEREO_FIGURES) {
		const read = (s: ComparableSnapshot) => stereoFigure(s, def.key);
		if (channels.length < 2) continue;
		build(`stereo:${def.key}`, def, null, read);
	}
	const methods = [...new Set(snaps.flatMap((s) => imdOf(s).map((x) => x.method)))];
	for (const method of methods)
		for (const def of IMD_FIGURES)
			for (const ch of channels)
				build(`imd:${method}:ch${ch}:${def.key}`, def, `${channelName(ch)} ${imdMethodLabel(method)}`, (s) =>
					imdFigure(s, ch, method, def.key)
				);
	return rows;
}

// ── limit checks ────────────────────────────────────────────────────────────

/** A stored check, read defensively. */
export interface CheckView {
	key: string;
	label: string;
	channel: 'left' | 'right' | null;
	op: LimitOp;
	value: number;
	unit: string;
	measured: number | null;
	pass: boolean;
	note: string | null;
}

export function checksOf(s: ComparableSnapshot): CheckView[] {
	const list = Array.isArray(s.checks) ? s.checks.filter(isRec) : [];
	const out: CheckView[] = [];
	for (const c of list) {
		const op = c.op === 'le' || c.op === 'ge' ? c.op : null;
		const value = num(c.value);
		const metric = str(c.metric);
		if (!op || value === null || !metric) continue;
		const channel = c.channel === 'left' || c.channel === 'right' ? c.channel : null;
		const unit = str(c.unit) ?? '';
		out.push({
			key: `${metric}|${channel ?? 'stereo'}|${op}|${value}|${unit}`,
			label: str(c.label) ?? metric,
			channel,
			op,
			value,
			unit,
			measured: num(c.measured),
			pass: c.pass === true,
			note: str(c.note)
		});
	}
	return out;
}

/** "THD+N (left) ≤ 0.05 %". */
export function describeCheck(c: Pick<CheckView, 'label' | 'channel' | 'op' | 'value' | 'unit'>): string {
	const where = c.channel ? ` (${c.channel})` : '';
	const unit = c.unit in UNITS ? UNITS[c.unit as Unit].label : c.unit;
	return `${c.label}${where} ${OP_SYMBOLS[c.op]} ${formatLimitValue(c.value)} ${unit}`;
}

export type Flip = 'pass→fail' | 'fail→pass' | 'still passes' | 'still fails' | 'not checked';

export interface CheckRow {
	key: string;
	text: string;
	/** Each snapshot's check for this limit, or null when its profile did not have it. */
	checks: (CheckView | null)[];
	/** Each snapshot against the first (the first's is null). */
	flips: (Flip | null)[];
}

/**
 * Limit checks of the picked snapshots lined up by limit (metric, channel, operator, value, unit),
 * so the same limit under two profiles still lines up, with how each later one moved from the first.
 */
export function checkRows(snaps: readonly ComparableSnapshot[]): CheckRow[] {
	const per = snaps.map(checksOf);
	const keys: string[] = [];
	const text = new Map<string, string>();
	for (const list of per)
		for (const c of list)
			if (!text.has(c.key)) {
				keys.push(c.key);
				text.set(c.key, describeCheck(c));
			}
	return keys.map((key) => {
		const checks = per.map((list) => list.find((c) => c.key === key) ?? null);
		const ref = checks[0];
		const flips = checks.map((c, i): Flip | null => {
			if (i === 0) return null;
			if (!c || !ref) return 'not checked';
			if (ref.pass && !c.pass) return 'pass→fail';
			if (!ref.pass && c.pass) return 'fail→pass';
			return c.pass ? 'still passes' : 'still fails';
		});
		return { key, text: text.get(key)!, checks, flips };
	});
}

/** Only the checks that flipped in at least one later snapshot. */
export function flippedChecks(rows: readonly CheckRow[]): CheckRow[] {
	return rows.filter((r) => r.flips.some((f) => f === 'pass→fail' || f === 'fail→pass'));
}

// ── measuring conditions ────────────────────────────────────────────────────

export interface ConditionDef {
	key: string;
	label: string;
}

/** Conditions compared between snapshots; a difference in any of these can mislead a comparison. */
export const CONDITIONS: readonly ConditionDef[] = [
	{ key: 'stimulus', label: 'Stimulus' },
	{ key: 'frequency', label: 'Fundamental' },
	{ key: 'load', label: 'Load' },
	{ key: 'level', label: 'Generator level' },
	{ key: 'band', label: 'Band' },
	{ key: 'weighting', label: 'Weighting' },
	{ key: 'window', label: 'Window' },
	{ key: 'fftSize', label: 'FFT size' },
	{ key: 'sampleRate', label: 'Sample rate' },
	{ key: 'fullScale', label: 'Full scale' },
	{ key: 'profile', label: 'Limit profile' }
];

/** The stimulus as one line, from the stored generator settings (if the bench sent them). */
export function stimulusOf(s: ComparableSnapshot): string | null {
	const r = isRec(s.results) ? s.results : {};
	const settings = isRec(s.settings) ? s.settings : {};
	const g = isRec(r.stimulus)
		? r.stimulus
		: isRec(settings.stimulus)
			? settings.stimulus
			: settings.generator;
	if (!isRec(g)) {
		// The analysis's own stimulus kind, when the bench sent no generator settings.
		const c = isRec(r.conditions) ? r.conditions : {};
		const kind: Record<string, string> = {
			tone: 'one tone',
			none: 'none (residual noise and hum)',
			smpte: 'SMPTE two-tone',
			'twin-tone': 'twin-tone'
		};
		return typeof c.stimulus === 'string' ? (kind[c.stimulus] ?? c.stimulus) : null;
	}
	const lvl = num(g.levelVrms);
	const level = lvl !== null ? `, ${formatLimitValue(lvl)} V rms` : '';
	const drive = g.drive === 'left' || g.drive === 'right' ? `, ${g.drive} channel driven` : '';
	switch (g.kind) {
		case 'off':
			return 'generator off';
		case 'sine':
			return `sine ${num(g.frequencyHz) !== null ? hzLabel(g.frequencyHz as number) : '?'}${level}${drive}`;
		case 'twin-tone':
			return `twin-tone ${hzLabel(num(g.f1Hz) ?? NaN)} + ${hzLabel(num(g.f2Hz) ?? NaN)}${level}${drive}`;
		case 'smpte':
			return `SMPTE ${hzLabel(num(g.lowHz) ?? NaN)} + ${hzLabel(num(g.highHz) ?? NaN)} ${num(g.ratio) ?? '?'}:1${level}${drive}`;
		case 'noise':
			return `${g.color === 'pink' ? 'pink' : 'white'} noise${level}${drive}`;
		default:
			return str(g.kind);
	}
}

/** Each condition of one snapshot as display text (null when not stored), keyed as CONDITIONS. */
export function conditionsOf(s: ComparableSnapshot): Record<string, string | null> {
	const r = isRec(s.results) ? s.results : {};
	const c = isRec(r.conditions) ? r.conditions : {};
	const band = Array.isArray(c.bandHz) && c.bandHz.length === 2 ? c.bandHz.map(num) : null;
	const load = num(c.loadOhms) ?? num(s.loadOhms);
	const level = num(c.referenceVrms);
	const fsv = Array.isArray(c.fullScaleVolts) ? c.fullScaleVolts.map(num).filter((v) => v !== null) : [];
	const fund = channelsOf(s)
		.map((ch) => num(ch.raw.frequencyHz))
		.filter((v): v is number => v !== null);
	const fftSize = num(c.fftSize);
	return {
		stimulus: stimulusOf(s),
		// Rounded to 3 significant digits: the fit's last hertz is not a change of stimulus.
		frequency: fund.length ? hzLabel(fund[0], { digits: 3 }) : null,
		load: load !== null ? `${formatLimitValue(load)} Ω` : 'not stated',
		level: level !== null ? `${formatLimitValue(level)} V rms` : 'not stated',
		band: band && band[0] !== null && band[1] !== null ? `${hzLabel(band[0])}–${hzLabel(band[1])}` : null,
		weighting: c.weighting === 'a' ? 'A-weighted' : c.weighting === 'none' ? 'unweighted' : null,
		window: str(c.window),
		fftSize: fftSize !== null ? String(fftSize) : null,
		sampleRate: num(s.sampleRateHz) !== null ? hzLabel(s.sampleRateHz as number) : null,
		fullScale: fsv.length ? `${fsv.map((v) => formatLimitValue(v as number)).join(' / ')} V peak` : null,
		profile: s.profileName ?? 'none'
	};
}

export interface ConditionRow {
	def: ConditionDef;
	values: (string | null)[];
	/** True when two snapshots state different values (a condition not stored in one does not count). */
	differs: boolean;
}

export function conditionRows(snaps: readonly ComparableSnapshot[]): ConditionRow[] {
	const per = snaps.map(conditionsOf);
	return CONDITIONS.map((def) => {
		const values = per.map((p) => p[def.key] ?? null);
		const stated = values.filter((v): v is string => v !== null);
		return { def, values, differs: new Set(stated).size > 1 };
	});
}

/** The conditions that differ, by label: ["Load", "Band"]. */
export function differingConditions(snaps: readonly ComparableSnapshot[]): string[] {
	return conditionRows(snaps)
		.filter((r) => r.differs)
		.map((r) => r.def.label);
}

// ── the selection ───────────────────────────────────────────────────────────

/** At most this many snapshots are compared at once (a chart with 12 traces is already busy). */
export const MAX_COMPARE = 6;

/** "12,15" → [12, 15]; order kept, duplicates dropped; null when any part is not a positive id. */
export function parseSelection(raw: string | null | undefined): number[] | null {
	if (raw == null || raw.trim() === '') return [];
	const parts = raw.split(',').map((p) => p.trim());
	const ids: number[] = [];
	for (const p of parts) {
		if (!/^\d{1,12}$/.test(p)) return null;
		const n = Number(p);
		if (!Number.isSafeInteger(n) || n < 1) return null;
		if (!ids.includes(n)) ids.push(n);
	}
	return ids;
}

/** The newest "before" and the newest "after" of a list (newest first), for one-click before vs after. */
export function beforeAfterPair(
	list: readonly { id: number; stage: string; createdAt: string }[]
): [number, number] | null {
	const newest = (stage: string) =>
		[...list]
			.filter((s) => s.stage === stage)
			.sort((a, b) => b.createdAt.localeCompare(a.createdAt) || b.id - a.id)[0];
	const b = newest('before');
	const a = newest('after');
	return b && a ? [b.id, a.id] : null;
}
