// Bench procedure results as the bench uploads them: the conditions and each step's raw reading.
// The server recomputes every derived figure and the verdict from these with $lib/procedures.
import { z } from 'zod';
import { PHONO_FEEDS } from '$lib/procedures/phono';
import { SWEEP_DENSITIES } from '$lib/procedures/sweep';
import { THD_THRESHOLDS_PERCENT, MAX_POWER_FREQUENCIES_HZ } from '$lib/procedures/max-power';
import { CROSSTALK_DIRECTIONS } from '$lib/procedures/crosstalk';
import { IMD_METHODS, imdProductPlan } from '$lib/procedures/imd';
import { STABILITY_OBSERVATIONS } from '$lib/procedures/stability';

export const PROCEDURE_KINDS = [
	'response',
	'phono',
	'max-power',
	'crosstalk',
	'imd',
	'meter',
	'stability'
] as const;
export type ProcedureKind = (typeof PROCEDURE_KINDS)[number];

export const PROCEDURE_LABELS: Record<ProcedureKind, string> = {
	response: 'Frequency response',
	phono: 'Phono equalisation',
	'max-power': 'Maximum power',
	crosstalk: 'Crosstalk',
	imd: 'Intermodulation (IMD)',
	meter: 'Front-panel meter check',
	stability: 'Stability check'
};

const finite = z.number().refine(Number.isFinite, 'must be a finite number');
const volts = finite.min(0).max(1000);
const hz = finite.min(1).max(200_000);
const perChannel = z.array(volts.nullable()).min(1).max(2);
const label = z.string().trim().min(1, 'Give the run a label').max(200);
const note = z.string().trim().max(2000).optional();
/** A limit profile whose procedure limit judges the run instead of the run's own limit. */
const profileId = z.number().int().positive().nullable().optional();
const literalUnion = <T extends readonly number[]>(values: T, what: string) =>
	z
		.number()
		.refine((v) => (values as readonly number[]).includes(v), `${what} must be one of ${values.join(', ')}`);

const sweepStep = z.strictObject({ frequencyHz: hz, levelVrms: perChannel });
const steps = z
	.array(sweepStep)
	.min(2, 'a sweep needs at least two steps')
	.max(200, 'a sweep has at most 200 steps')
	.refine((s) => s.some((x) => Math.abs(x.frequencyHz - 1000) < 1e-6), 'a sweep needs its 1 kHz step');

const band = z
	.tuple([hz, hz])
	.refine(([lo, hi]) => hi > lo, 'the band’s upper edge must be above its lower edge');

export const responseRunSchema = z.strictObject({
	kind: z.literal('response'),
	label,
	profileId,
	perOctave: literalUnion(SWEEP_DENSITIES, 'points per octave'),
	settleMs: z.number().int().min(0).max(10_000),
	generatorVrms: finite.positive().max(20),
	bandHz: band,
	/** Pass when the flatness over the band is within ± this many dB (null: no limit). */
	limitPlusMinusDb: finite.positive().max(40).nullable(),
	steps,
	note
});

export const phonoRunSchema = z.strictObject({
	kind: z.literal('phono'),
	label,
	profileId,
	perOctave: literalUnion(SWEEP_DENSITIES, 'points per octave'),
	settleMs: z.number().int().min(0).max(10_000),
	generatorVrms: finite.positive().max(20),
	feed: z.enum(PHONO_FEEDS, `feed is one of ${PHONO_FEEDS.join(', ')}`),
	iecRolloff: z.boolean(),
	loadingOhms: finite.positive().max(1_000_000),
	loadingPicofarads: finite.min(0).max(10_000),
	networkErrorDb: z.array(finite.min(-20).max(20)).max(200).optional(),
	/** Pass when every step is within ± this many dB of the curve (null: no limit). */
	limitDb: finite.positive().max(40).nullable(),
	steps,
	note
});

const rampReading = z.strictObject({
	levelVrms: volts,
	outputVrms: perChannel,
	thdnPercent: z.array(finite.min(0).max(1000).nullable()).min(1).max(2)
});

export const maxPowerRunSchema = z.strictObject({
	kind: z.literal('max-power'),
	label,
	profileId,
	frequencyHz: literalUnion(MAX_POWER_FREQUENCIES_HZ, 'frequency'),
	loadOhms: finite.min(1).max(100),
	thresholdPercent: literalUnion(THD_THRESHOLDS_PERCENT, 'THD+N threshold'),
	startLevelVrms: finite.positive().max(20),
	stepDb: finite.min(0.1).max(6),
	maxLevelVrms: finite.positive().max(20),
	maxSteps: z.number().int().min(1).max(200),
	channels: z.number().int().min(1).max(2),
	/** The mains voltage the technician read at the unit during the run. */
	mainsVoltsRms: finite.min(80, 'mains below 80 V is not a full-mains reading').max(260),
	/** True when the unit was powered through a current-limiting lamp: such a figure is refused. */
	throughLamp: z.boolean(),
	cancelled: z.boolean().default(false),
	/** Pass only when each channel makes at least this power at the threshold (null: no limit). */
	minPowerW: finite.positive().max(10_000).nullable().optional(),
	readings: z.array(rampReading).min(1).max(200),
	note
});

const crosstalkStep = z.strictObject({
	frequencyHz: hz,
	direction: z.enum(CROSSTALK_DIRECTIONS, `direction is one of ${CROSSTALK_DIRECTIONS.join(', ')}`),
	drivenVrms: volts.refine((v) => v > 0, 'the driven channel must carry a signal'),
	leakVrms: volts
});

export const crosstalkRunSchema = z.strictObject({
	kind: z.literal('crosstalk'),
	label,
	profileId,
	settleMs: z.number().int().min(0).max(10_000),
	generatorVrms: finite.positive().max(20),
	/** Pass when every step is at or below this many dB (for example −60; null: no limit). */
	limitDb: finite.min(-200).max(0).nullable(),
	steps: z.array(crosstalkStep).min(1).max(24),
	note
});

const imdChannel = z.strictObject({
	tone1Vrms: volts.refine((v) => v > 0, 'the first tone must be present'),
	tone2Vrms: volts.refine((v) => v > 0, 'the second tone must be present'),
	productVrms: z.array(volts).min(3).max(4)
});

const imdMeasurement = z
	.strictObject({
		method: z.enum(IMD_METHODS, `method is one of ${IMD_METHODS.join(', ')}`),
		channels: z.array(imdChannel.nullable()).min(1).max(2)
	})
	.superRefine((m, ctx) => {
		const n = imdProductPlan(m.method).length;
		m.channels.forEach((c, i) => {
			if (c && c.productVrms.length !== n)
				ctx.addIssue({
					code: 'custom',
					path: ['channels', i, 'productVrms'],
					message: `${m.method} IMD lists ${n} products (${imdProductPlan(m.method)
						.map((p) => p.label)
						.join(', ')})`
				});
		});
	});

export const imdRunSchema = z.strictObject({
	kind: z.literal('imd'),
	label,
	profileId,
	settleMs: z.number().int().min(0).max(10_000),
	/** Generator level, V rms (for two tones the peak-equivalent sine level, as the bridge defines it). */
	generatorVrms: finite.positive().max(20),
	/** Pass when every channel's IMD is at or below this many percent (null: no limit). */
	limitPercent: finite.positive().max(100).nullable(),
	measurements: z.array(imdMeasurement).min(1).max(2),
	note
});

const meterStep = z.strictObject({
	targetW: finite.positive().max(10_000),
	generatorVrms: volts,
	outputVrms: volts.refine((v) => v > 0, 'the output must carry a signal'),
	indicatedW: finite.min(0).max(100_000).nullable()
});

export const meterRunSchema = z.strictObject({
	kind: z.literal('meter'),
	label,
	profileId,
	frequencyHz: hz,
	loadOhms: finite.min(1).max(100),
	/** The channel whose power the meter shows. */
	channel: z.enum(['left', 'right'], 'channel is left or right'),
	settleMs: z.number().int().min(0).max(10_000),
	/** Pass when every reading is within ± this many dB of the measured power (null: no limit). */
	limitDb: finite.positive().max(20).nullable(),
	steps: z.array(meterStep).min(1, 'read the meter at one power at least').max(30),
	note
});

export const stabilityRunSchema = z.strictObject({
	kind: z.literal('stability'),
	label,
	squareWaveHz: finite.min(10).max(100_000),
	loadOhms: finite.min(1).max(100),
	capacitanceMicrofarads: finite.min(0).max(100),
	/** What the scope showed on each channel checked. */
	observed: z.enum(STABILITY_OBSERVATIONS, `observed is one of ${STABILITY_OBSERVATIONS.join(', ')}`),
	channels: z.enum(['left', 'right', 'both'], 'channels is left, right or both'),
	/** A photo of the scope trace already uploaded to this job's files (null: none). */
	photoFileId: z.number().int().positive().nullable(),
	note
});

export const procedureRunSchema = z.discriminatedUnion(
	'kind',
	[
		responseRunSchema,
		phonoRunSchema,
		maxPowerRunSchema,
		crosstalkRunSchema,
		imdRunSchema,
		meterRunSchema,
		stabilityRunSchema
	],
	{
		error: `kind is one of ${PROCEDURE_KINDS.join(', ')}`
	}
);
export type ProcedureRunInput = z.input<typeof procedureRunSchema>;
export type ProcedureRunData = z.infer<typeof procedureRunSchema>;

/** Turning a recorded sweep among a job's files into a response (POST /api/files/{id}/response). */
export const fileResponseSchema = z.strictObject({
	/** Also each step's deviation from the RIAA playback curve (a phono stage's sweep). */
	riaa: z.boolean().default(false),
	/** With riaa: the expected curve includes the IEC 7950 µs term. */
	iecRolloff: z.boolean().default(false)
});
export type FileResponseInput = z.infer<typeof fileResponseSchema>;
