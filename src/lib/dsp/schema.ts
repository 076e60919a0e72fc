// Zod schema of analysis results: what the server validates and stores, and what the UI reads back.

import { z } from 'zod';
import { WINDOW_NAMES, type WindowName } from './windows';

const finite = z.number().refine(Number.isFinite, 'must be a finite number');
const windowName = z.enum(WINDOW_NAMES as [WindowName, ...WindowName[]]);
export const weightingSchema = z.enum(['none', 'a']);

export const harmonicResultSchema = z.object({
	order: z.number().int().min(2).max(50),
	frequencyHz: finite.nonnegative(),
	levelDbc: finite,
	levelVrms: finite.nonnegative().optional()
});

export const channelResultSchema = z.object({
	channel: z.number().int().min(0).max(63),
	frequencyHz: finite.nonnegative(),
	levelVrms: finite.nonnegative(),
	levelDbv: finite,
	levelDbu: finite,
	levelDbfs: finite,
	powerW: finite.nonnegative().optional(),
	gainDb: finite.optional(),
	thdPercent: finite.nonnegative(),
	thdDb: finite,
	thdnPercent: finite.nonnegative(),
	thdnDb: finite,
	noiseVrms: finite.nonnegative(),
	noiseDbv: finite.optional(),
	snrDb: finite,
	noiseWeightedVrms: finite.nonnegative(),
	snrWeightedDb: finite,
	sinadDb: finite,
	enob: finite,
	totalVrms: finite.nonnegative().optional(),
	dcVolts: finite.optional(),
	harmonics: z.array(harmonicResultSchema).max(49)
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
	thdnReference: z.literal('total-in-band')
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
	maxHarmonic: z.number().int().min(2).max(50).optional()
});

export type ChannelResultParsed = z.infer<typeof channelResultSchema>;
export type AnalysisResultParsed = z.infer<typeof analysisResultSchema>;
