// Request schemas and answer shapes of the soak API, shared by the server and the browser:
// starting a run, uploading readings and events, aborting. The service ($lib/server/soak)
// applies the rules that need the database (the run's time window, its probes, the job's lock).
import { z } from 'zod';
import { PROBE_IDS, SOURCE_KINDS, TEMPS_KINDS } from '$lib/bridge/protocol';
import { customDriveSchema, SOAK_PRESET_IDS } from '$lib/soak/presets';
import { soakLimitsPatchSchema } from '$lib/soak/soak-limits';
export type {
	SoakEventView,
	SoakRunDetail,
	SoakRunListItem,
	SoakRunView,
	SoakStatus,
	SoakVerdict
} from '$lib/soak/types';

export const CELSIUS_MIN = -50;
export const CELSIUS_MAX = 400;
export const READINGS_MAX_PER_BATCH = 5000;
export const READINGS_BODY_MAX_BYTES = 1024 * 1024;
/**
 * The fastest simulator thermal time the server accepts: at ×120 the hour-long preset takes
 * 30 s, enough for a demo, while a faster clock would turn the record into a handful of readings.
 */
export const MAX_ACCELERATED_TIME_SCALE = 120;
/**
 * Wall time past a run's planned end after which the server closes it itself (the page that
 * should have finished it is gone), so an abandoned run cannot block the job's next soak.
 */
export const OVERDUE_GRACE_MS = 10 * 60 * 1000;

// ── inputs ───────────────────────────────────────────────────────────────────

export const createRunSchema = z
	.object({
		preset: z.enum(SOAK_PRESET_IDS),
		/** Required for the custom preset: watts or volts into the load, frequency, duration, channels. */
		custom: customDriveSchema.optional(),
		/** Any limit not given comes from the shop's `soakDefaultLimits`. */
		limits: soakLimitsPatchSchema.optional(),
		probes: z.array(z.enum(PROBE_IDS)).min(1).max(PROBE_IDS.length).optional(),
		/** The technician confirmed the one-third-power caution (needed on old or unrestored units). */
		confirmHeat: z.boolean().optional(),
		/** What the page saw of the bridge at start; optional so `{ preset }` alone works. */
		bridge: z
			.object({
				bootId: z.string().max(64).optional(),
				lastSeq: z.number().int().min(-1).nullable().optional(),
				/** The hello's audio source and temperature source: only the simulator may run accelerated. */
				source: z.enum(SOURCE_KINDS).optional(),
				temps: z.enum(TEMPS_KINDS).optional(),
				timeScale: z.number().positive().max(MAX_ACCELERATED_TIME_SCALE).optional()
			})
			.strict()
			.optional()
	})
	.strict();
export type CreateRunInput = z.infer<typeof createRunSchema>;

export const readingsBodySchema = z
	.object({
		readings: z.array(z.unknown()).min(1).max(READINGS_MAX_PER_BATCH),
		/** The bridge boot the readings came from, when not given per reading. */
		bootId: z.string().max(64).optional()
	})
	.strict();

/** A moment, ms since the epoch, inside what a JavaScript Date can hold. */
const at = z.number().int().min(0).max(8.64e15);
const key = z.string().min(1).max(80).optional();
export const eventSchema = z.discriminatedUnion('kind', [
	z
		.object({
			kind: z.literal('gap'),
			at,
			key,
			detail: z
				.object({
					reason: z.enum(['bridge-restart', 'disconnected', 'history-lost']),
					fromT: z.number().nullable().optional(),
					toT: z.number().nullable().optional(),
					fromSeq: z.number().int().nullable().optional(),
					toSeq: z.number().int().nullable().optional(),
					fromBootId: z.string().max(64).nullable().optional(),
					toBootId: z.string().max(64).nullable().optional()
				})
				.strict()
		})
		.strict(),
	z
		.object({
			kind: z.literal('thdn'),
			at,
			key,
			detail: z
				.object({
					thdnPercent: z.number().min(0).max(1000),
					outputW: z.number().min(0).max(100_000).nullable().optional(),
					outputVrms: z.number().min(0).max(1000).nullable().optional(),
					channel: z.enum(['left', 'right']).optional()
				})
				.strict()
		})
		.strict(),
	z
		.object({
			kind: z.literal('generator'),
			at,
			key,
			detail: z
				.object({
					state: z.enum(['on', 'off']),
					levelVrms: z.number().min(0).max(100).optional(),
					frequencyHz: z.number().min(0).max(100_000).optional(),
					note: z.string().max(300).optional()
				})
				.strict()
		})
		.strict(),
	z
		.object({
			/** DC at the output, logged where the input is DC-coupled (the bridge says so). */
			kind: z.literal('dc-offset'),
			at,
			key,
			detail: z
				.object({
					channel: z.enum(['left', 'right']),
					dcVolts: z.number().min(-100).max(100)
				})
				.strict()
		})
		.strict(),
	z
		.object({
			kind: z.literal('note'),
			at,
			key,
			detail: z.object({ text: z.string().min(1).max(1000) }).strict()
		})
		.strict()
]);
export type SoakEventInput = z.infer<typeof eventSchema>;
export const eventsBodySchema = z.object({ events: z.array(eventSchema).min(1).max(500) }).strict();

export const breachSchema = z
	.object({
		kind: z.enum(['max-heatsink', 'rise-rate', 'left-right', 'thdn', 'output-dropout']),
		probe: z.string().max(80),
		/** The reading's bridge time, ms since the epoch; the server also checks it lies within the run. */
		t: z.number().min(0).max(8.64e15),
		atS: z.number().min(-1e9).max(1e9).optional(),
		value: z.number().min(-1e9).max(1e9),
		limit: z.number().min(-1e9).max(1e9),
		message: z.string().max(500)
	})
	.strict();

export const abortSchema = z
	.object({
		reason: z.string().trim().min(1).max(500),
		/** The moment the run ended (a breach's reading time), ms since the epoch; default now. */
		at: z.number().int().min(0).max(8.64e15).optional(),
		breach: breachSchema.optional()
	})
	.strict();
export type AbortInput = z.infer<typeof abortSchema>;
