// Zod schema of analysis results: what the server validates and stores, and what the UI reads back.

import { z } from 'zod';
import { WINDOW_NAMES, type WindowName } from './windows';

const finite = z.number().refine(Number.isFinite, 'must be a finite number');
const windowName = z.enum(WINDOW_NAMES as [WindowName, ...WindowName[]]);
export const weightingSchema = z.enum(['none', 'a']);
export const stimulusSchema = z.enum(['tone', 'none', 'smpte', 'twin-tone']);
export const mainsHzSchema = z.union([z.literal(50), z.literal(60)]);
/** A figure that is null when there is no tone to refer it to (stimulus 'none', no signal). */
const figure = finite.nullable();

export const harmonicResultSchema = z.object({
	order: z.number().int().min(2).max(50),
	frequencyHz: finite.nonnegative(),
	levelDbc: finite,
	levelVrms: finite.nonnegative().optional()
});

const imdResultSchema = z.object({
	method: z.enum(['smpte', 'twin-tone']),
	reference: z.enum(['hf-tone', 'sum-of-tones']),
	f1Hz: finite,
	f2Hz: finite,
	level1Vrms: finite.nonnegative(),
	level2Vrms: finite.nonnegative(),
	d2Percent: finite.nonnegative(),
	d3Percent: finite.nonnegative(),
	imdPercent: finite.nonnegative(),
	imdDb: finite,
	products: z
		.array(
			z.object({
				label: z.string().max(40),
				order: z.union([z.literal(2), z.literal(3)]),
				frequencyHz: finite,
				levelVrms: finite.nonnegative(),
				levelDbr: finite
			})
		)
		.max(8),
	fftSize: z.number().int().positive()
});

// Fields added with the stimulus condition are optional so results stored before it still parse.
export const channelResultSchema = z.object({
	channel: z.number().int().min(0).max(63),
	stimulus: stimulusSchema.optional(),
	signal: z.boolean().optional(),
	signalReason: z.string().max(300).nullable().optional(),
	frequencyHz: finite.nonnegative().nullable(),
	levelVrms: finite.nonnegative(),
	levelDbv: finite,
	levelDbu: finite,
	levelDbfs: finite,
	powerW: finite.nonnegative().optional(),
	gainDb: figure.optional(),
	thdPercent: finite.nonnegative().nullable(),
	thdDb: figure,
	harmonicsBeyondBand: z.array(z.number().int().min(2).max(50)).max(49).optional(),
	thdnPercent: finite.nonnegative().nullable(),
	thdnDb: figure,
	noiseVrms: finite.nonnegative(),
	noiseDbv: finite.optional(),
	snrDb: figure,
	noiseWeightedVrms: finite.nonnegative(),
	noiseWeightedDbv: finite.optional(),
	snrWeightedDb: figure,
	snDb: figure.optional(),
	snWeightedDb: figure.optional(),
	sinadDb: figure,
	enob: figure,
	totalVrms: finite.nonnegative().optional(),
	dcVolts: finite.optional(),
	harmonics: z.array(harmonicResultSchema).max(49),
	hum: z
		.array(
			z.object({
				order: z.number().int().min(1).max(10),
				frequencyHz: finite.nonnegative(),
				levelVrms: finite.nonnegative(),
				levelDbv: finite,
				inBand: z.boolean()
			})
		)
		.max(10)
		.optional(),
	imd: imdResultSchema.nullable().optional(),
	imdError: z.string().max(300).nullable().optional(),
	clipping: z
		.object({
			fullScaleSamples: z.number().int().nonnegative(),
			flatTopPercent: finite.nonnegative().nullable(),
			crestFactorDb: finite,
			clipped: z.boolean(),
			reason: z.string().max(300).nullable()
		})
		.optional()
});

export const analysisConditionsSchema = z.object({
	window: windowName,
	analysisWindow: windowName,
	method: z.literal('sine-fit-residual'),
	fftSize: z
		.number()
		.int()
		.min(256)
		.max(1 << 20),
	averages: z.number().int().min(1),
	bandHz: z.tuple([finite.nonnegative(), finite.positive()]),
	weighting: weightingSchema,
	loadOhms: finite.positive().nullable(),
	referenceVrms: finite.positive().nullable(),
	fullScaleVolts: z.array(finite.positive()).min(1),
	binHz: finite.positive(),
	maxHarmonic: z.number().int().min(2).max(50),
	thdReference: z.literal('fundamental'),
	thdnReference: z.literal('total-in-band'),
	stimulus: stimulusSchema.optional(),
	mainsHz: mainsHzSchema.optional(),
	toneMarginDb: finite.optional(),
	expectedFrequencyHz: finite.positive().nullable().optional(),
	snReference: z
		.object({ vrms: finite.positive(), label: z.string().max(80) })
		.nullable()
		.optional()
});

export const analysisResultSchema = z.object({
	sampleRateHz: finite.positive(),
	conditions: analysisConditionsSchema,
	channels: z.array(channelResultSchema).min(1).max(64),
	balanceDb: finite.optional(),
	crosstalkDb: finite.optional(),
	crosstalkFromChannel: z.number().int().min(0).optional(),
	crosstalkToChannel: z.number().int().min(0).optional()
});

/** Options as they arrive from outside (a form, a query string, a JSON body). */
export const analysisOptionsSchema = z.object({
	fftSize: z
		.number()
		.int()
		.min(256)
		.max(1 << 20)
		.refine((n) => (n & (n - 1)) === 0, 'must be a power of two')
		.optional(),
	window: windowName.optional(),
	bandHz: z
		.tuple([finite.nonnegative(), finite.positive()])
		.refine(([lo, hi]) => hi > lo, 'upper band edge must be above the lower')
		.optional(),
	weighting: weightingSchema.optional(),
	loadOhms: finite.positive().optional(),
	referenceVrms: finite.positive().optional(),
	averages: z.number().int().min(1).max(1024).optional(),
	maxHarmonic: z.number().int().min(2).max(50).optional(),
	stimulus: stimulusSchema.optional(),
	mainsHz: mainsHzSchema.optional(),
	toneMarginDb: finite.min(0).max(60).optional(),
	expectedFrequencyHz: finite.positive().optional(),
	imdF1Hz: finite.positive().optional(),
	imdF2Hz: finite.positive().optional(),
	snReference: z.object({ vrms: finite.positive(), label: z.string().trim().min(1).max(80) }).optional()
});

export type ChannelResultParsed = z.infer<typeof channelResultSchema>;
export type AnalysisResultParsed = z.infer<typeof analysisResultSchema>;
