// The limits that guard a heat-soak run (stored with each run, defaulted from the shop setting
// `soakDefaultLimits`) and the steady-state criterion reported in the summary.
import { z } from 'zod';

export const soakLimitsSchema = z.object({
	/** Highest temperature allowed on either heatsink probe, °C. */
	maxHeatsinkC: z.number().min(20).max(250),
	/** Highest rise rate on any unit probe, °C per minute, measured over `riseWindowS`. */
	maxRiseCPerMin: z.number().positive().max(100),
	/** The sliding window the rise rate is measured over, seconds of soak time. */
	riseWindowS: z.number().int().min(10).max(1800).default(60),
	/** Largest allowed difference between the left and right heatsinks, °C. */
	maxLeftRightDiffC: z.number().positive().max(200),
	/** Optional THD+N ceiling watched during the run, percent; null when not watched. */
	maxThdnPercent: z.number().positive().max(100).nullable().default(null)
});
export type SoakLimits = z.infer<typeof soakLimitsSchema>;

/**
 * Used when the shop has not set its own defaults. Common practice: audio heatsinks are
 * usually kept to about 70–80 °C, so 75 °C is a cautious ceiling; a rise faster than a few
 * °C per minute at a fraction of rated power points at a bias or thermal-coupling fault.
 */
export const FALLBACK_SOAK_LIMITS: SoakLimits = {
	maxHeatsinkC: 75,
	maxRiseCPerMin: 5,
	riseWindowS: 60,
	maxLeftRightDiffC: 10,
	maxThdnPercent: null
};

/** Accept the shop setting leniently: fill what it lacks from the fallback, ignore the rest. */
export function limitsFromSetting(value: unknown): SoakLimits {
	const partial = soakLimitsSchema.partial().safeParse(value);
	if (!partial.success) return { ...FALLBACK_SOAK_LIMITS };
	const merged = { ...FALLBACK_SOAK_LIMITS };
	for (const [k, v] of Object.entries(partial.data)) {
		if (v !== undefined) (merged as Record<string, unknown>)[k] = v;
	}
	const full = soakLimitsSchema.safeParse(merged);
	return full.success ? full.data : { ...FALLBACK_SOAK_LIMITS };
}

/** Thermal steady state: every unit probe stays within `bandC` over `windowS` of soak time. */
export interface SteadyCriterion {
	bandC: number;
	windowS: number;
}
// Common practice for a soak log: "settled" when nothing moves more than 1 °C in 5 minutes.
export const STEADY_CRITERION: SteadyCriterion = { bandC: 1, windowS: 300 };
