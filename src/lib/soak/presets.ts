// Heat-soak presets and the drive they imply: a fraction of the job's rated power (per channel)
// into its rated load, turned into the rms voltage the output must reach (P = V²/R).
import { z } from 'zod';
import { vrmsForWatts, wattsIntoLoad } from '$lib/dsp/units';

export const SOAK_PRESET_IDS = ['eighth-power-60', 'third-power-60', 'custom'] as const;
export type SoakPresetId = (typeof SOAK_PRESET_IDS)[number];

export const SOAK_CHANNELS = ['left', 'right'] as const;
export type SoakChannel = (typeof SOAK_CHANNELS)[number];

export interface FixedPreset {
	id: Exclude<SoakPresetId, 'custom'>;
	label: string;
	/** Fraction of the rated power per channel. */
	powerFraction: number;
	durationS: number;
	frequencyHz: number;
	/** Where the drive level comes from, shown beside it. */
	basis: string;
	/** What a pass means (and does not), shown beside it and with the verdict. */
	meaning: string;
	/** A caution shown before starting, when the preset carries one. */
	caution?: string;
}

/** What every borrowed-level preset says of its verdict. */
const BURN_IN_MEANING =
	"A shop burn-in at the rule's preconditioning level: a pass says the unit ran an hour at this level within the shop's limits. It is not a power-rating test and does not show compliance with the rule.";

export const FIXED_PRESETS: readonly FixedPreset[] = [
	{
		id: 'eighth-power-60',
		label: '⅛ rated power · 60 min · 1 kHz',
		powerFraction: 1 / 8,
		durationS: 3600,
		frequencyHz: 1000,
		basis:
			'Drive level borrowed from the preconditioning step of the US FTC amplifier rule (16 CFR Part 432, as amended in 2000)',
		meaning: BURN_IN_MEANING
	},
	{
		id: 'third-power-60',
		label: '⅓ rated power · 60 min · 1 kHz',
		powerFraction: 1 / 3,
		durationS: 3600,
		frequencyHz: 1000,
		basis:
			'Drive level borrowed from the preconditioning step of the original 1974 FTC amplifier rule (16 CFR Part 432)',
		meaning: BURN_IN_MEANING,
		caution:
			'One-third power is close to the worst-case heat of a class-AB output stage (its dissipation peaks around a third to two-fifths of full power, common practice). On a unit marked unrestored or made before 1974 — old capacitors, dried thermal compound, tired bias — confirm before starting, and stay with it.'
	}
];

export { RATING_BASES, type RatingBasis } from '$lib/schemas/enums';

/** Why a job's rated power cannot set a soak's drive, or null when it can (or no basis is recorded). */
export function ratingBasisProblem(basis: string | null | undefined): string | null {
	if (basis === 'music')
		return "The job's rated power is a music-power (peak) figure: a soak needs the continuous power per channel, both channels driven, at a stated THD. Correct the rating on the job first.";
	if (basis === 'total')
		return "The job's rated power is a total for all channels: a soak needs the continuous power per channel, both channels driven, at a stated THD. Correct the rating on the job first.";
	return null;
}

/** Units older than this (by the job's year) need the one-third-power caution confirmed. */
export const HEAT_CONFIRM_BEFORE_YEAR = 1974;

/**
 * Whether a preset needs the technician's explicit confirmation on this unit: one-third power
 * on a unit marked unrestored or made before 1974.
 */
export function needsHeatConfirmation(
	preset: SoakPresetId,
	unit: { year: number | null | undefined; unrestored?: boolean | null }
): boolean {
	if (preset !== 'third-power-60') return false;
	return unit.unrestored === true || (typeof unit.year === 'number' && unit.year < HEAT_CONFIRM_BEFORE_YEAR);
}

export function fixedPreset(id: SoakPresetId): FixedPreset | undefined {
	return FIXED_PRESETS.find((p) => p.id === id);
}

export const PRESET_LABELS: Record<SoakPresetId, string> = {
	'eighth-power-60': '⅛ power, 60 min',
	'third-power-60': '⅓ power, 60 min',
	custom: 'Custom'
};

/** Custom drive: either watts or volts into the load (one of them), plus the rest. */
export const customDriveSchema = z
	.object({
		watts: z.number().positive().max(5000).optional(),
		volts: z.number().positive().max(500).optional(),
		loadOhms: z.number().min(0.5).max(10_000).optional(),
		frequencyHz: z.number().min(10).max(40_000).default(1000),
		durationS: z
			.number()
			.int()
			.min(10)
			.max(24 * 3600)
			.default(3600),
		channels: z.array(z.enum(SOAK_CHANNELS)).min(1).max(2).default(['left', 'right'])
	})
	.refine((d) => (d.watts === undefined) !== (d.volts === undefined), {
		message: 'Give either watts or volts into the load, not both'
	});
export type CustomDrive = z.infer<typeof customDriveSchema>;

export interface JobRating {
	ratedPowerW: number | null;
	ratedLoadOhms: number | null;
}

/** Everything the run needs to drive the unit. Power and voltage are per driven channel. */
export interface SoakDrive {
	preset: SoakPresetId;
	drivePowerW: number;
	driveVrms: number;
	loadOhms: number;
	frequencyHz: number;
	durationS: number;
	channels: SoakChannel[];
}

export type DriveResult = { ok: true; drive: SoakDrive } | { ok: false; message: string };

function hasRating(x: number | null | undefined): x is number {
	return typeof x === 'number' && Number.isFinite(x) && x > 0;
}

/**
 * The drive for a preset on a job. Fixed presets need the job's rated power and load;
 * custom drive may name its own load and otherwise falls back to the job's rated load.
 */
export function computeDrive(preset: SoakPresetId, rating: JobRating, custom?: CustomDrive): DriveResult {
	if (preset === 'custom') {
		if (!custom)
			return {
				ok: false,
				message: 'A custom soak needs its drive (watts or volts, load, frequency, duration)'
			};
		const loadOhms = custom.loadOhms ?? rating.ratedLoadOhms;
		if (!hasRating(loadOhms))
			return { ok: false, message: 'Give the load in ohms: the job has no rated load' };
		const drivePowerW = custom.watts ?? wattsIntoLoad(custom.volts as number, loadOhms);
		const driveVrms = custom.volts ?? vrmsForWatts(custom.watts as number, loadOhms);
		return {
			ok: true,
			drive: {
				preset,
				drivePowerW,
				driveVrms,
				loadOhms,
				frequencyHz: custom.frequencyHz,
				durationS: custom.durationS,
				channels: [...new Set(custom.channels)]
			}
		};
	}
	const p = fixedPreset(preset);
	if (!p) return { ok: false, message: `Unknown preset ${preset}` };
	if (!hasRating(rating.ratedPowerW) || !hasRating(rating.ratedLoadOhms)) {
		return {
			ok: false,
			message: 'The job has no rated power and load: enter them on the job, or choose a custom drive'
		};
	}
	const drivePowerW = rating.ratedPowerW * p.powerFraction;
	return {
		ok: true,
		drive: {
			preset,
			drivePowerW,
			driveVrms: vrmsForWatts(drivePowerW, rating.ratedLoadOhms),
			loadOhms: rating.ratedLoadOhms,
			frequencyHz: p.frequencyHz,
			durationS: p.durationS,
			// The FTC preconditioning drives all channels at once.
			channels: ['left', 'right']
		}
	};
}
