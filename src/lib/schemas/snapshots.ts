// The `meta` part of a snapshot upload: what the bench says about a capture. The bench page
// builds it and the server validates it with this one schema (no server imports here).
import { z } from 'zod';
import { WINDOW_NAMES, type WindowName } from '$lib/dsp/windows';

export const SNAPSHOT_STAGE_NAMES = ['before', 'after', 'other'] as const;

/** Shortest capture the server analyses: one 4k FFT frame (the smallest size the bench offers). */
export const SNAPSHOT_MIN_SAMPLES = 4096;

/**
 * What drove the unit while it was captured: a single tone (THD, THD+N), nothing (noise floor),
 * an SMPTE pair or a twin tone (intermodulation). Kept with the snapshot's conditions.
 */
export const SNAPSHOT_STIMULI = ['tone', 'none', 'smpte', 'twin-tone'] as const;
export type SnapshotStimulus = (typeof SNAPSHOT_STIMULI)[number];

/** Sample rates the server analyses: below 8 kHz there is no audio band, above 768 kHz no bench ADC. */
export const SNAPSHOT_MIN_SAMPLE_RATE_HZ = 8_000;
export const SNAPSHOT_MAX_SAMPLE_RATE_HZ = 768_000;

const finite = z.number().refine(Number.isFinite, 'must be a finite number');

export const snapshotMetaSchema = z.strictObject({
	label: z.string().trim().min(1, 'Give the snapshot a label').max(200),
	stage: z.enum(SNAPSHOT_STAGE_NAMES),
	profileId: z.number().int().positive().nullish(),
	/** Peak volts of sample value 1.0: one number for all channels or one per channel. */
	fullScaleVolts: z
		.union([finite.positive().max(10_000), z.array(finite.positive().max(10_000)).min(1).max(8)])
		.default(1),
	loadOhms: finite.positive().max(100_000).nullish(),
	/** Generator level in V rms, for gain. */
	referenceVrms: finite.positive().max(100).nullish(),
	/** The test signal during the capture; older benches sent none and meant a tone. */
	stimulus: z.enum(SNAPSHOT_STIMULI).default('tone'),
	/**
	 * The capture came through an input the bridge declares DC-coupled: only then is its DC a
	 * reading of the unit's output offset (most audio interfaces block DC).
	 */
	dcCoupled: z.boolean().default(false),
	/** How the bench analysed it; used where a chosen profile does not fix the condition. */
	analysis: z
		.strictObject({
			fftSize: z
				.number()
				.int()
				.min(SNAPSHOT_MIN_SAMPLES)
				.max(262_144)
				.refine((n) => (n & (n - 1)) === 0, 'must be a power of two')
				.optional(),
			window: z.enum(WINDOW_NAMES as [WindowName, ...WindowName[]]).optional(),
			bandHz: z
				.tuple([finite.nonnegative(), finite.positive()])
				.refine(([lo, hi]) => hi > lo, 'upper band edge must be above the lower')
				.optional(),
			weighting: z.enum(['none', 'a']).optional(),
			averages: z.number().int().min(1).max(64).optional()
		})
		.optional(),
	/** Generator, simulator and page settings as the bench had them (kept for the record, not trusted). */
	settings: z
		.record(z.string(), z.unknown())
		.refine((v) => JSON.stringify(v).length <= 32_768, 'settings are larger than 32 KiB')
		.optional()
});
/** What the bench sends (defaults may be left out). */
export type SnapshotMetaInput = z.input<typeof snapshotMetaSchema>;
/** What the server works with after validation. */
export type SnapshotMeta = z.output<typeof snapshotMetaSchema>;
