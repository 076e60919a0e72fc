// Limit profiles: the zod schemas for what a supervisor defines (conditions + limits) and the
// pure evaluation of those limits against measured figures. Shared by the server (verdicts on
// stored snapshots) and the bench page (live pass/fail), so both judge the same way.
import { z } from 'zod';
import { hzLabel } from './measure-format';
import { stimulusSchema } from './dsp/schema';

// ── metrics and units ───────────────────────────────────────────────────────

/** How a metric's value is entered; each unit converts to the metric's base unit by `factor`. */
export const UNITS = {
	V: { label: 'V', factor: 1 },
	mV: { label: 'mV', factor: 1e-3 },
	µV: { label: 'µV', factor: 1e-6 },
	W: { label: 'W', factor: 1 },
	mW: { label: 'mW', factor: 1e-3 },
	dB: { label: 'dB', factor: 1 },
	dBV: { label: 'dBV', factor: 1 },
	'%': { label: '%', factor: 1 },
	ppm: { label: 'ppm', factor: 1e-4 },
	Hz: { label: 'Hz', factor: 1 },
	kHz: { label: 'kHz', factor: 1e3 }
} as const;
export type Unit = keyof typeof UNITS;
export const UNIT_KEYS = Object.keys(UNITS) as [Unit, ...Unit[]];

export interface MetricInfo {
	label: string;
	/**
	 * 'channel': one value per channel; 'stereo': one value comparing the two channels;
	 * 'procedure': a bench procedure's figure, judged when that procedure is saved (never on a snapshot).
	 */
	scope: 'channel' | 'stereo' | 'procedure';
	/** The only rule that makes sense for the figure (a procedure limit is a bound one way). */
	op?: LimitOp;
	/** The unit values are stored in and compared in. */
	baseUnit: Unit;
	/** Units a limit may be entered in (the first is the default). */
	units: readonly Unit[];
	/** One line for the profile editor: what exactly is measured. */
	help: string;
}

export const METRICS = {
	levelVrms: {
		label: 'Level',
		scope: 'channel',
		baseUnit: 'V',
		units: ['V', 'mV'],
		help: 'Output level, V rms, in the measurement band'
	},
	levelDbv: {
		label: 'Level (dBV)',
		scope: 'channel',
		baseUnit: 'dBV',
		units: ['dBV'],
		help: 'Output level in dB re 1 V rms'
	},
	powerW: {
		label: 'Power into load',
		scope: 'channel',
		baseUnit: 'W',
		units: ['W', 'mW'],
		help: 'V rms² / load, with the load the snapshot states'
	},
	gainDb: {
		label: 'Gain',
		scope: 'channel',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'Output level against the generator level'
	},
	thdPercent: {
		label: 'THD',
		scope: 'channel',
		baseUnit: '%',
		units: ['%', 'ppm'],
		help: 'Harmonics 2–10 in band, relative to the fundamental'
	},
	thdDb: {
		label: 'THD (dB)',
		scope: 'channel',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'THD in dB re fundamental'
	},
	thdnPercent: {
		label: 'THD+N',
		scope: 'channel',
		baseUnit: '%',
		units: ['%', 'ppm'],
		help: 'Residual after removing the fundamental, band-limited, relative to the total'
	},
	thdnDb: { label: 'THD+N (dB)', scope: 'channel', baseUnit: 'dB', units: ['dB'], help: 'THD+N in dB' },
	snrDb: {
		label: 'SNR re tone',
		scope: 'channel',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'The test tone against the rest of the spectrum while it plays (harmonics excluded), with the profile weighting; not the S/N of a noise test'
	},
	noiseVrms: {
		label: 'Noise',
		scope: 'channel',
		baseUnit: 'V',
		units: ['µV', 'mV', 'V'],
		help: 'Noise rms in band with the profile weighting: with no stimulus the total in-band rms (hum included), with a tone what is left after the tone and its harmonics'
	},
	snDb: {
		label: 'S/N',
		scope: 'channel',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'No stimulus, input terminated: the stated reference output (rated power or 1 W into the load, 0.5 V for a line stage) over the noise, with the profile weighting'
	},
	imdPercent: {
		label: 'IMD',
		scope: 'channel',
		baseUnit: '%',
		units: ['%', 'ppm'],
		help: 'Intermodulation of the SMPTE (re the HF tone) or twin-tone (re the sum of the tones) stimulus'
	},
	imdDb: { label: 'IMD (dB)', scope: 'channel', baseUnit: 'dB', units: ['dB'], help: 'IMD in dB' },
	dcOffsetV: {
		label: 'DC offset',
		scope: 'channel',
		baseUnit: 'V',
		units: ['mV', 'V'],
		help: '|DC| at the output; only from a DC-coupled input (most audio interfaces block DC)'
	},
	frequencyHz: {
		label: 'Frequency',
		scope: 'channel',
		baseUnit: 'Hz',
		units: ['Hz', 'kHz'],
		help: 'Frequency of the fundamental'
	},
	levelSpreadDb: {
		label: 'Steadiness: level spread',
		scope: 'channel',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'Max − min level over the last few seconds'
	},
	thdnSpreadDb: {
		label: 'Steadiness: THD+N spread',
		scope: 'channel',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'Max − min THD+N (dB) over the last few seconds'
	},
	balanceDb: {
		label: 'Channel balance',
		scope: 'stereo',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'Level difference between channels, |L − R|'
	},
	crosstalkDb: {
		label: 'Crosstalk',
		scope: 'stereo',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'Undriven channel at the driven frequency, re the driven channel (negative); also judges the crosstalk procedure'
	},
	flatnessDb: {
		label: 'Procedure: response flatness',
		scope: 'procedure',
		op: 'le',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'Every step of a frequency-response sweep within ± this many dB of its 1 kHz level, over the sweep’s band'
	},
	riaaDeviationDb: {
		label: 'Procedure: RIAA deviation',
		scope: 'procedure',
		op: 'le',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'Largest deviation of a phono sweep from the RIAA playback curve, ± dB'
	},
	powerAtThresholdW: {
		label: 'Procedure: power at the THD+N threshold',
		scope: 'procedure',
		op: 'ge',
		baseUnit: 'W',
		units: ['W'],
		help: 'Each channel’s power at the chosen THD+N threshold, from the maximum-power ramp, into the load it states'
	},
	meterErrorDb: {
		label: 'Procedure: front-panel meter error',
		scope: 'procedure',
		op: 'le',
		baseUnit: 'dB',
		units: ['dB'],
		help: 'Largest |error| of the unit’s own power meter against the measured power, dB'
	}
} as const satisfies Record<string, MetricInfo>;

export type Metric = keyof typeof METRICS;
export const METRIC_KEYS = Object.keys(METRICS) as [Metric, ...Metric[]];
export type ChannelMetric = {
	[K in Metric]: (typeof METRICS)[K]['scope'] extends 'channel' ? K : never;
}[Metric];
export type StereoMetric = {
	[K in Metric]: (typeof METRICS)[K]['scope'] extends 'stereo' ? K : never;
}[Metric];
export type ProcedureMetric = Exclude<Metric, ChannelMetric | StereoMetric>;
export const CHANNEL_METRICS = METRIC_KEYS.filter((m) => METRICS[m].scope === 'channel') as ChannelMetric[];
export const STEREO_METRICS = METRIC_KEYS.filter((m) => METRICS[m].scope === 'stereo') as StereoMetric[];

export const LIMIT_CHANNELS = ['left', 'right', 'each'] as const;
export type LimitChannel = (typeof LIMIT_CHANNELS)[number];
export const LIMIT_OPS = ['le', 'ge'] as const;
export type LimitOp = (typeof LIMIT_OPS)[number];
export const OP_SYMBOLS: Record<LimitOp, string> = { le: '≤', ge: '≥' };

/** Same spelling as the measurement core's `Weighting` ('a' = A-weighting, IEC 61672-1). */
export const WEIGHTINGS = ['none', 'a'] as const;
export type Weighting = (typeof WEIGHTINGS)[number];

// ── schemas ─────────────────────────────────────────────────────────────────

const finite = z.number().finite();

/** The measuring conditions a profile assumes; the bench can apply them in one click. */
export const conditionsSchema = z
	.object({
		generatorFrequencyHz: finite.min(1).max(100_000).optional(),
		generatorLevelVrms: finite.positive().max(100).optional(),
		loadOhms: finite.positive().max(100_000).optional(),
		bandLowHz: finite.min(0).max(100_000).default(20),
		bandHighHz: finite.min(1).max(200_000).default(20_000),
		weighting: z.enum(WEIGHTINGS).default('none'),
		/** Free text: which input, control positions, warm-up … */
		notes: z.string().trim().max(500).optional(),
		/**
		 * What the technician sets up before capturing (drive level, control positions, which
		 * input is terminated): shown on the bench above Capture, never judged as a limit.
		 */
		setup: z.string().trim().max(1000).optional(),
		/** A profile that only makes sense with one stimulus fixes it (residual noise: none). */
		stimulus: stimulusSchema.optional()
	})
	.refine((c) => c.bandHighHz > c.bandLowHz, {
		message: 'The band’s upper edge must be above its lower edge',
		path: ['bandHighHz']
	});
export type LimitConditions = z.infer<typeof conditionsSchema>;

export const limitSchema = z
	.object({
		metric: z.enum(METRIC_KEYS),
		channel: z.enum(LIMIT_CHANNELS).default('each'),
		op: z.enum(LIMIT_OPS),
		value: finite,
		unit: z.enum(UNIT_KEYS)
	})
	.refine((l) => (METRICS[l.metric].units as readonly Unit[]).includes(l.unit), {
		message: 'This unit does not fit the metric',
		path: ['unit']
	})
	.refine(
		(l) => {
			const fixed = (METRICS[l.metric] as MetricInfo).op;
			return fixed === undefined || fixed === l.op;
		},
		{
			message:
				'This procedure limit is a bound one way: flatness, RIAA deviation and meter error take ≤, power takes ≥',
			path: ['op']
		}
	);
export type Limit = z.infer<typeof limitSchema>;

export const profileInputSchema = z.object({
	name: z.string().trim().min(1, 'Give the profile a name').max(120),
	description: z.string().trim().max(1000).nullish(),
	conditions: conditionsSchema,
	limits: z.array(limitSchema).min(1, 'Add at least one limit').max(64)
});
export type ProfileInput = z.infer<typeof profileInputSchema>;
/** What callers may pass before defaults are filled in (the API body). */
export type ProfileInputRaw = z.input<typeof profileInputSchema>;

export const profilePatchSchema = z
	.object({
		name: profileInputSchema.shape.name.optional(),
		description: profileInputSchema.shape.description,
		conditions: conditionsSchema.optional(),
		limits: profileInputSchema.shape.limits.optional(),
		archived: z.boolean().optional()
	})
	.refine((p) => Object.keys(p).length > 0, { message: 'Nothing to change' });
export type ProfilePatch = z.infer<typeof profilePatchSchema>;

/** A profile as the API and the bench see it. */
export interface LimitProfileView {
	id: number;
	name: string;
	description: string | null;
	conditions: LimitConditions;
	limits: Limit[];
	archived: boolean;
}

// ── evaluation ──────────────────────────────────────────────────────────────

/** The figures a limit can be checked against. Missing or non-finite values fail their checks. */
export interface Measurements {
	/** Index 0 = left, 1 = right; a mono capture has one entry; a channel not analysed is undefined. */
	channels: (Partial<Record<ChannelMetric, number | null>> | undefined)[];
	stereo: Partial<Record<StereoMetric, number | null>>;
}

export interface Check {
	/** Position of the limit in the profile. */
	index: number;
	metric: Metric;
	label: string;
	channel: 'left' | 'right' | null;
	op: LimitOp;
	/** The limit as entered. */
	value: number;
	unit: Unit;
	/** Measured value in the entered unit, null when it could not be measured. */
	measured: number | null;
	pass: boolean;
	/** Why a check failed without a number ("right channel not captured"). */
	note?: string;
}

export type Verdict = 'pass' | 'fail' | 'none';

export function toBaseUnit(value: number, unit: Unit): number {
	return value * UNITS[unit].factor;
}
export function fromBaseUnit(value: number, unit: Unit): number {
	return value / UNITS[unit].factor;
}

const CHANNEL_NAMES = ['left', 'right'] as const;

function compare(measuredBase: number, op: LimitOp, limitBase: number): boolean {
	// A relative tolerance so a value entered as 0.1 % passes a measurement of exactly 0.1 %
	// despite float noise in unit conversion.
	const eps = 1e-9 * Math.max(1, Math.abs(limitBase));
	return op === 'le' ? measuredBase <= limitBase + eps : measuredBase >= limitBase - eps;
}

function checkOne(
	index: number,
	limit: Limit,
	channel: 'left' | 'right' | null,
	measuredBase: number | null | undefined,
	missingNote: string
): Check {
	const ok = typeof measuredBase === 'number' && Number.isFinite(measuredBase);
	const measured = ok ? fromBaseUnit(measuredBase, limit.unit) : null;
	return {
		index,
		metric: limit.metric,
		label: METRICS[limit.metric].label,
		channel,
		op: limit.op,
		value: limit.value,
		unit: limit.unit,
		measured,
		pass: ok && compare(measuredBase, limit.op, toBaseUnit(limit.value, limit.unit)),
		...(ok ? {} : { note: missingNote })
	};
}

/** Check every limit; 'each' expands to one check per captured channel (at least the left). */
export function evaluateLimits(limits: readonly Limit[], m: Measurements): Check[] {
	const checks: Check[] = [];
	limits.forEach((limit, index) => {
		const info: MetricInfo = METRICS[limit.metric];
		// Procedure limits judge a saved procedure ($lib/procedures/limits), never a snapshot or the live view.
		if (info.scope === 'procedure') return;
		if (info.scope === 'stereo') {
			const v = m.stereo[limit.metric as StereoMetric];
			const both = m.channels[0] !== undefined && m.channels[1] !== undefined;
			checks.push(checkOne(index, limit, null, v, both ? 'not measured' : 'needs both channels'));
			return;
		}
		const metric = limit.metric as ChannelMetric;
		const present = ([0, 1] as const).filter((c) => m.channels[c] !== undefined);
		const wanted: readonly (0 | 1)[] =
			limit.channel === 'left' ? [0] : limit.channel === 'right' ? [1] : present.length ? present : [0];
		for (const ch of wanted) {
			const row = m.channels[ch];
			const note = row ? 'not measured' : `${CHANNEL_NAMES[ch]} channel not captured`;
			checks.push(checkOne(index, limit, CHANNEL_NAMES[ch], row?.[metric], note));
		}
	});
	return checks;
}

/**
 * Fail the checks whose figure depends on a bench condition that differs from the profile's
 * assumption: power needs the profile's load, gain its generator level. The measured value stays
 * (it is true for the bench as stated); the note says why it cannot count.
 */
export function conditionChecks(
	checks: Check[],
	assumed: Pick<LimitConditions, 'loadOhms' | 'generatorLevelVrms'>,
	bench: { loadOhms: number | null; referenceVrms: number | null }
): Check[] {
	const differs = (benchValue: number | null, profileValue: number | undefined) =>
		profileValue !== undefined &&
		(benchValue === null || Math.abs(benchValue - profileValue) > CONDITION_TOLERANCE * profileValue);
	const loadOff = differs(bench.loadOhms, assumed.loadOhms);
	const levelOff = differs(bench.referenceVrms, assumed.generatorLevelVrms);
	return checks.map((c) => {
		if (c.metric === 'powerW' && loadOff)
			return {
				...c,
				pass: false,
				note: `measured into ${bench.loadOhms ?? '?'} Ω; the profile assumes ${assumed.loadOhms} Ω`
			};
		if (c.metric === 'gainDb' && levelOff)
			return {
				...c,
				pass: false,
				note: `generator at ${bench.referenceVrms ?? '?'} V rms; the profile assumes ${assumed.generatorLevelVrms} V rms`
			};
		return c;
	});
}

/** Bench and profile conditions closer than this fraction count as the same (0.1 % ≈ 0.009 dB). */
const CONDITION_TOLERANCE = 1e-3;

export function verdictOf(checks: readonly Check[]): Verdict {
	if (checks.length === 0) return 'none';
	return checks.every((c) => c.pass) ? 'pass' : 'fail';
}

/** Stereo measurements for limit checks: balance as |L − R| in dB, and crosstalk when reported. */
export function stereoMeasurements(
	left: { levelDbv?: number | null } | undefined,
	right: { levelDbv?: number | null } | undefined,
	crosstalkDb?: number | null
): Measurements['stereo'] {
	const l = left?.levelDbv;
	const r = right?.levelDbv;
	const balanceDb =
		typeof l === 'number' && typeof r === 'number' && Number.isFinite(l) && Number.isFinite(r)
			? Math.abs(l - r)
			: null;
	return { balanceDb, crosstalkDb: crosstalkDb ?? null };
}

/** A limit as one line of text: "THD+N each ≤ 0.1 %". */
export function describeLimit(limit: Limit): string {
	const info: MetricInfo = METRICS[limit.metric];
	const where =
		info.scope !== 'channel' ? '' : limit.channel === 'each' ? ' (each channel)' : ` (${limit.channel})`;
	return `${info.label}${where} ${OP_SYMBOLS[limit.op]} ${formatLimitValue(limit.value)} ${UNITS[limit.unit].label}`;
}

/** Conditions as one line: "1 kHz, 0.5 V, 8 Ω, 20 Hz–20 kHz, unweighted". */
export function describeConditions(c: LimitConditions): string {
	const parts: string[] = [];
	if (c.generatorFrequencyHz !== undefined) parts.push(`generator ${hzLabel(c.generatorFrequencyHz)}`);
	if (c.generatorLevelVrms !== undefined) parts.push(`${formatLimitValue(c.generatorLevelVrms)} V rms`);
	if (c.loadOhms !== undefined) parts.push(`${formatLimitValue(c.loadOhms)} Ω load`);
	parts.push(`${hzLabel(c.bandLowHz)}–${hzLabel(c.bandHighHz)}`);
	parts.push(weightingLabel(c.weighting));
	return parts.join(', ');
}

/** The live bench's measuring conditions, as far as a profile governs them. */
export interface LiveConditions {
	bandHz: readonly [number, number];
	weighting: Weighting;
	loadOhms: number | null;
	referenceVrms: number | null;
}

/**
 * The profile conditions the live bench does not match, each as "what (live, profile …)", in a
 * fixed order; [] when all match. The band's top is compared after clipping both to Nyquist.
 */
export function conditionMismatches(live: LiveConditions, c: LimitConditions, nyquistHz: number): string[] {
	const out: string[] = [];
	const band = (lo: number, hi: number) => `${hzLabel(lo)}–${hzLabel(Math.min(hi, nyquistHz))}`;
	if (
		Math.abs(live.bandHz[0] - c.bandLowHz) > 0.5 ||
		Math.abs(Math.min(live.bandHz[1], nyquistHz) - Math.min(c.bandHighHz, nyquistHz)) > 0.5
	)
		out.push(`band (${band(live.bandHz[0], live.bandHz[1])}, profile ${band(c.bandLowHz, c.bandHighHz)})`);
	if (live.weighting !== c.weighting)
		out.push(`weighting (${weightingLabel(live.weighting)}, profile ${weightingLabel(c.weighting)})`);
	const same = (a: number | null, b: number) => a !== null && Math.abs(a - b) <= 1e-9 * Math.max(1, b);
	if (c.loadOhms !== undefined && !same(live.loadOhms, c.loadOhms))
		out.push(
			`load (${live.loadOhms === null ? 'not set' : `${formatLimitValue(live.loadOhms)} Ω`}, profile ${formatLimitValue(c.loadOhms)} Ω)`
		);
	if (c.generatorLevelVrms !== undefined && !same(live.referenceVrms, c.generatorLevelVrms))
		out.push(
			`gain reference (${live.referenceVrms === null ? 'not set' : `${formatLimitValue(live.referenceVrms)} V rms`}, profile ${formatLimitValue(c.generatorLevelVrms)} V rms)`
		);
	return out;
}

/** One sentence naming what differs, with the verb agreeing: "Live load (4 Ω, profile 8 Ω) differs from the profile." */
export function describeMismatch(diffs: readonly string[]): string | null {
	if (diffs.length === 0) return null;
	const list =
		diffs.length === 1 ? diffs[0] : `${diffs.slice(0, -1).join(', ')} and ${diffs[diffs.length - 1]}`;
	return `Live ${list} ${diffs.length === 1 ? 'differs' : 'differ'} from the profile; a capture is judged in the profile’s band and weighting, and its power and gain limits fail under another load or level.`;
}

export function weightingLabel(w: Weighting): string {
	return w === 'a' ? 'A-weighted' : 'unweighted';
}

/** Up to 4 significant digits without trailing zeros. */
export function formatLimitValue(v: number): string {
	if (!Number.isFinite(v)) return '—';
	// Float dust (a balance of 1e-7 dB) reads as 0, never in exponent notation.
	if (Math.abs(v) < 1e-4) return '0';
	const s = String(Number(v.toPrecision(4)));
	return s.includes('e') ? v.toFixed(4) : s;
}

// ── from analysis results ───────────────────────────────────────────────────

/** The per-channel figures of the measurement core that limits read (a structural subset of ChannelResult). */
export interface ChannelFigures {
	/** Null without a tone (no stimulus, no signal, two-tone stimuli). */
	frequencyHz: number | null;
	levelVrms: number;
	levelDbv: number;
	powerW?: number;
	gainDb?: number | null;
	thdPercent: number | null;
	thdDb: number | null;
	thdnPercent: number | null;
	thdnDb: number | null;
	noiseVrms: number;
	snrDb: number | null;
	noiseWeightedVrms: number;
	snrWeightedDb: number | null;
	snDb?: number | null;
	snWeightedDb?: number | null;
	imd?: { imdPercent: number; imdDb: number } | null;
	dcVolts?: number;
}

export interface SteadinessFiguresLike {
	levelSpreadDb: number | null;
	thdnSpreadDb: number | null;
}

/**
 * Measurements for limit checks from analysis results. With A-weighting, noise and SNR are the
 * weighted figures (THD+N is already weighted by the analysis); balance is |L − R|.
 */
export function measurementsFromResults(
	channels: readonly (ChannelFigures | undefined)[],
	stereo: { balanceDb?: number | null; crosstalkDb?: number | null },
	steadiness: readonly (SteadinessFiguresLike | null | undefined)[],
	weighting: Weighting,
	/** DC offset counts only from an input that passes DC (the bridge says so); otherwise "not measured". */
	opts: { dcCoupled?: boolean } = {}
): Measurements {
	const weighted = weighting === 'a';
	return {
		channels: channels.map((c, i) =>
			c === undefined
				? undefined
				: {
						levelVrms: c.levelVrms,
						levelDbv: c.levelDbv,
						powerW: c.powerW ?? null,
						gainDb: c.gainDb ?? null,
						thdPercent: c.thdPercent,
						thdDb: c.thdDb,
						thdnPercent: c.thdnPercent,
						thdnDb: c.thdnDb,
						snrDb: weighted ? c.snrWeightedDb : c.snrDb,
						noiseVrms: weighted ? c.noiseWeightedVrms : c.noiseVrms,
						frequencyHz: c.frequencyHz,
						snDb: (weighted ? c.snWeightedDb : c.snDb) ?? null,
						imdPercent: c.imd?.imdPercent ?? null,
						imdDb: c.imd?.imdDb ?? null,
						dcOffsetV: opts.dcCoupled && typeof c.dcVolts === 'number' ? Math.abs(c.dcVolts) : null,
						levelSpreadDb: steadiness[i]?.levelSpreadDb ?? null,
						thdnSpreadDb: steadiness[i]?.thdnSpreadDb ?? null
					}
		),
		stereo: {
			balanceDb: typeof stereo.balanceDb === 'number' ? Math.abs(stereo.balanceDb) : null,
			crosstalkDb: stereo.crosstalkDb ?? null
		}
	};
}
