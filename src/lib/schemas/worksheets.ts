// Bench worksheets kept on a job: the intake checklist, the first power-up of a long-stored unit,
// the bias and offset sheet and the electrical safety check before return. Shared by the API,
// the forms and the seed; every figure carries its unit in its name. No server imports.
import { z } from 'zod';

export const WORKSHEET_KINDS = ['intake', 'power-up', 'bias', 'safety'] as const;
export type WorksheetKind = (typeof WORKSHEET_KINDS)[number];

export const WORKSHEET_KIND_LABELS: Record<WorksheetKind, string> = {
	intake: 'Intake checklist',
	'power-up': 'First power-up',
	bias: 'Bias and offset',
	safety: 'Safety check before return'
};

export const worksheetKindSchema = z.enum(
	WORKSHEET_KINDS,
	`The worksheet is one of ${WORKSHEET_KINDS.join(', ')}`
);

const note = (max = 500) => z.string('Text').trim().max(max, `At most ${max} characters`);
/** A number the form may leave empty. */
const reading = (min: number, max: number, what: string) =>
	z
		.number(`${what} is a number`)
		.min(min, `${what} is at least ${min}`)
		.max(max, `${what} is at most ${max}`)
		.nullable();

// ── intake ──────────────────────────────────────────────────────────────────

export const AS_RECEIVED = ['dead', 'partly-working', 'working-with-faults'] as const;
export const AS_RECEIVED_LABELS: Record<(typeof AS_RECEIVED)[number], string> = {
	dead: 'Dead',
	'partly-working': 'Partly working',
	'working-with-faults': 'Working with faults'
};

export const intakeSheetSchema = z
	.object({
		/** The unit's mains voltage selector (or rating plate when it has none), V rms. */
		mainsSettingVoltsRms: reading(90, 260, 'The unit’s mains setting'),
		/** Fuse found in the holder: value and type as marked, e.g. "T2.5A 5×20 mm". */
		fuseFound: note(80),
		knobsPresent: z.boolean('Knobs present is yes or no').nullable(),
		coversPresent: z.boolean('Covers present is yes or no').nullable(),
		accessories: note(300),
		asReceived: z.enum(AS_RECEIVED, `As received is one of ${AS_RECEIVED.join(', ')}`).nullable(),
		customerSpeakerOhms: reading(1, 64, 'Speaker impedance'),
		diagnosisFeeAuthorised: z.boolean('Diagnosis fee authorised is yes or no'),
		/** Stored for years: do not apply full mains until the first power-up sheet is complete. */
		storedForYears: z.boolean('Stored for years is yes or no'),
		notes: note(2000)
	})
	.strict();
export type IntakeSheet = z.infer<typeof intakeSheetSchema>;

// ── first power-up ──────────────────────────────────────────────────────────

export const POWER_UP_METHODS = ['variable-transformer', 'series-lamp', 'both'] as const;
export const POWER_UP_METHOD_LABELS: Record<(typeof POWER_UP_METHODS)[number], string> = {
	'variable-transformer': 'Variable transformer',
	'series-lamp': 'Series lamp',
	both: 'Variable transformer and series lamp'
};
export const POWER_UP_STEPS_MAX = 40;
export const RAILS_MAX = 8;

export const powerUpStepSchema = z
	.object({
		mainsVoltsRms: z
			.number('Mains applied is a number of volts')
			.min(0, 'Mains applied is at least 0 V')
			.max(260, 'Mains applied is at most 260 V'),
		currentMilliamps: reading(0, 20_000, 'Current drawn'),
		powerWatts: reading(0, 5_000, 'Power drawn'),
		/** Supply rails measured, V (signed: −42.1 for a negative rail). */
		railVolts: z
			.array(z.number('A rail voltage is a number').min(-1000).max(1000))
			.max(RAILS_MAX, `At most ${RAILS_MAX} rails per step`),
		holdSeconds: reading(0, 86_400, 'Held for'),
		/** What was seen, heard or smelt: lamp glow settling, smell, smoke, hum. */
		observed: note(300)
	})
	.strict();
export type PowerUpStep = z.infer<typeof powerUpStepSchema>;

export const powerUpSheetSchema = z
	.object({
		method: z.enum(POWER_UP_METHODS, `Method is one of ${POWER_UP_METHODS.join(', ')}`).nullable(),
		lampWatts: reading(1, 500, 'Lamp wattage'),
		/** Capacitor reforming time, where done. */
		reformingMinutes: reading(0, 10_000, 'Reforming time'),
		steps: z.array(powerUpStepSchema).max(POWER_UP_STEPS_MAX, `At most ${POWER_UP_STEPS_MAX} steps`),
		/** The technician's word that the unit reached full mains and held without distress. */
		finished: z.boolean('Finished is yes or no'),
		notes: note(2000)
	})
	.strict()
	.superRefine((v, ctx) => {
		if ((v.method === 'series-lamp' || v.method === 'both') && v.lampWatts === null)
			ctx.addIssue({ code: 'custom', path: ['lampWatts'], message: 'Give the series lamp’s wattage' });
	});
export type PowerUpSheet = z.infer<typeof powerUpSheetSchema>;

// ── bias and offset ─────────────────────────────────────────────────────────

export const BIAS_CHANNELS_MAX = 16;

/** One bias figure through the job: the service manual's target and the values read. */
export const biasReadingsSchema = z
	.object({
		target: z.number('The target is a number').positive('The target is above 0').max(10_000),
		asFound: reading(-10_000, 10_000, 'As found'),
		setCold: reading(-10_000, 10_000, 'Set cold'),
		/** Re-checked after 15–30 minutes. */
		warm: reading(-10_000, 10_000, 'After 15–30 min'),
		afterSoak: reading(-10_000, 10_000, 'After the soak')
	})
	.strict();
export type BiasReadings = z.infer<typeof biasReadingsSchema>;

export const biasChannelSchema = z
	.object({
		label: z.string('Channel label').trim().min(1, 'Name the channel (L, R, V3 …)').max(20),
		/** Where it is read: the named emitter resistor, or the valve's position. */
		measuredAt: note(60),
		/** mV across the named resistor … */
		biasMillivolts: biasReadingsSchema.nullable(),
		/** … or mA (per valve on a valve amplifier). */
		biasMilliamps: biasReadingsSchema.nullable(),
		/** DC offset at the speaker terminals. */
		offsetMillivolts: z
			.object({
				cold: reading(-100_000, 100_000, 'Offset cold'),
				warm: reading(-100_000, 100_000, 'Offset warm')
			})
			.strict()
	})
	.strict()
	.refine((c) => (c.biasMillivolts === null) !== (c.biasMilliamps === null), {
		path: ['biasMillivolts'],
		message: 'Give the bias either in mV across a resistor or in mA, one of the two'
	});
export type BiasChannel = z.infer<typeof biasChannelSchema>;

export const biasSheetSchema = z
	.object({
		channels: z.array(biasChannelSchema).max(BIAS_CHANNELS_MAX, `At most ${BIAS_CHANNELS_MAX} channels`),
		notes: note(2000)
	})
	.strict();
export type BiasSheet = z.infer<typeof biasSheetSchema>;

// ── safety check before return ──────────────────────────────────────────────

export const SAFETY_RESULTS = ['pass', 'fail', 'n-a'] as const;
export type SafetyResult = (typeof SAFETY_RESULTS)[number];
export const SAFETY_RESULT_LABELS: Record<SafetyResult, string> = {
	pass: 'Pass',
	fail: 'Fail',
	'n-a': 'Not applicable'
};

const result = z.enum(SAFETY_RESULTS, 'Result is pass, fail or n-a').nullable();
const instrument = note(80);

export const safetySheetSchema = z
	.object({
		/** Class I (earthed) unit: earth continuity applies; otherwise insulation or leakage. */
		earthed: z.boolean('Earthed is yes or no').nullable(),
		earthContinuity: z
			.object({ result, earthOhms: reading(0, 1000, 'Earth resistance'), instrument, note: note(200) })
			.strict(),
		insulation: z
			.object({
				result,
				insulationMegohms: reading(0, 1_000_000, 'Insulation resistance'),
				instrument,
				note: note(200)
			})
			.strict(),
		leakage: z
			.object({ result, leakageMilliamps: reading(0, 1000, 'Leakage current'), instrument, note: note(200) })
			.strict(),
		/** The mains (X/Y-rated) capacitors: checked or replaced. */
		mainsCapacitors: z
			.object({
				result,
				action: z.enum(['checked', 'replaced'], 'Checked or replaced').nullable(),
				instrument,
				note: note(200)
			})
			.strict(),
		/** Fuse value fitted, against the unit's rating. */
		fuseRating: z
			.object({ result, fuseAmps: reading(0.01, 100, 'Fuse rating'), instrument, note: note(200) })
			.strict(),
		mainsCord: z.object({ result, instrument, note: note(200) }).strict()
	})
	.strict();
export type SafetySheet = z.infer<typeof safetySheetSchema>;
export type SafetyItemKey = Exclude<keyof SafetySheet, 'earthed'>;

export const SAFETY_ITEMS: { key: SafetyItemKey; label: string; reading: string | null; unit: string }[] = [
	{ key: 'earthContinuity', label: 'Earth continuity', reading: 'earthOhms', unit: 'Ω' },
	{ key: 'insulation', label: 'Insulation resistance', reading: 'insulationMegohms', unit: 'MΩ' },
	{ key: 'leakage', label: 'Leakage current', reading: 'leakageMilliamps', unit: 'mA' },
	{ key: 'mainsCapacitors', label: 'Mains (X/Y) capacitors', reading: null, unit: '' },
	{ key: 'fuseRating', label: 'Fuse value for the unit’s rating', reading: 'fuseAmps', unit: 'A' },
	{ key: 'mainsCord', label: 'Mains cord and strain relief', reading: null, unit: '' }
];

// ── one schema per kind ─────────────────────────────────────────────────────

export interface WorksheetData {
	intake: IntakeSheet;
	'power-up': PowerUpSheet;
	bias: BiasSheet;
	safety: SafetySheet;
}

export const WORKSHEET_SCHEMAS = {
	intake: intakeSheetSchema,
	'power-up': powerUpSheetSchema,
	bias: biasSheetSchema,
	safety: safetySheetSchema
} as const satisfies Record<WorksheetKind, z.ZodType>;

/** PUT body: the sheet and the version it was edited from (0 for a new sheet). */
export const worksheetPutSchema = z
	.object({
		version: z.number('version is the sheet’s version you edited (0 for a new sheet)').int().min(0),
		data: z.unknown()
	})
	.strict();
export type WorksheetPut = z.infer<typeof worksheetPutSchema>;

/** A blank sheet of each kind, for a form that starts empty. */
export function emptySheet<K extends WorksheetKind>(kind: K): WorksheetData[K] {
	const blank = { result: null, instrument: '', note: '' };
	const sheets: WorksheetData = {
		intake: {
			mainsSettingVoltsRms: null,
			fuseFound: '',
			knobsPresent: null,
			coversPresent: null,
			accessories: '',
			asReceived: null,
			customerSpeakerOhms: null,
			diagnosisFeeAuthorised: false,
			storedForYears: false,
			notes: ''
		},
		'power-up': {
			method: null,
			lampWatts: null,
			reformingMinutes: null,
			steps: [],
			finished: false,
			notes: ''
		},
		bias: { channels: [], notes: '' },
		safety: {
			earthed: null,
			earthContinuity: { ...blank, earthOhms: null },
			insulation: { ...blank, insulationMegohms: null },
			leakage: { ...blank, leakageMilliamps: null },
			mainsCapacitors: { ...blank, action: null },
			fuseRating: { ...blank, fuseAmps: null },
			mainsCord: { ...blank }
		}
	};
	return sheets[kind];
}

// ── the shop's worksheet settings ───────────────────────────────────────────

export const worksheetSettingsSchema = z.object({
	/** The shop's own mains, V rms: a unit set for another is flagged at intake. */
	homeMainsVoltsRms: z
		.number('Home mains is a number of volts')
		.min(90, 'Home mains is at least 90 V')
		.max(260, 'Home mains is at most 260 V'),
	/** Bias tolerance, ± % of the service manual's target. */
	biasTolerancePercent: z
		.number('Bias tolerance is a percentage')
		.positive('Bias tolerance is above 0 %')
		.max(50, 'Bias tolerance is at most 50 %'),
	/** Largest DC offset at the speaker terminals accepted, ± mV. */
	offsetLimitMillivolts: z
		.number('Offset limit is a number of mV')
		.positive('Offset limit is above 0 mV')
		.max(1000, 'Offset limit is at most 1000 mV')
});
export type WorksheetSettings = z.infer<typeof worksheetSettingsSchema>;

/**
 * Defaults: 230 V mains; bias within ±10 % of the manual's target (common practice); DC offset
 * within ±50 mV at the speaker terminals (common practice for direct-coupled solid-state outputs).
 */
export const DEFAULT_WORKSHEET_SETTINGS: WorksheetSettings = {
	homeMainsVoltsRms: 230,
	biasTolerancePercent: 10,
	offsetLimitMillivolts: 50
};
