// The limits that guard a heat-soak run: the shop's `soakDefaultLimits` (schema in
// $lib/schemas/settings) extended with the rise-rate window, stored with each run; and the
// steady-state criterion reported in the summary.
import { z } from 'zod';
import {
	soakLimitsSchema as shopSoakLimitsSchema,
	DEFAULT_SOAK_LIMITS,
	type SoakLimits as ShopSoakLimits
} from '$lib/schemas/settings';

const thdnCeilingDb = z.number().min(-160).max(0).nullable();
const riseWindowS = z.number().int().min(10).max(1800);

export const soakLimitsSchema = shopSoakLimitsSchema.extend({
	/** THD+N ceiling watched during the run, dB relative to the output; null when not watched. */
	thdnCeilingDb: thdnCeilingDb.default(null),
	/** The sliding window the rise rate is measured over, seconds of soak time. */
	riseWindowS: riseWindowS.default(60)
});
/** What a run may change from the shop defaults; no defaults here, so an absent field keeps the shop's value. */
export const soakLimitsPatchSchema = shopSoakLimitsSchema
	.extend({ thdnCeilingDb, riseWindowS })
	.partial()
	.strict();
export type SoakLimits = z.infer<typeof soakLimitsSchema>;
export type { ShopSoakLimits };

/** A run's limits: the shop's defaults with whatever the technician changed for this run. */
export function runLimits(
	shop: ShopSoakLimits = DEFAULT_SOAK_LIMITS,
	overrides: z.infer<typeof soakLimitsPatchSchema> = {}
): SoakLimits {
	const defined = Object.fromEntries(Object.entries(overrides).filter(([, v]) => v !== undefined));
	return soakLimitsSchema.parse({ ...shop, ...defined });
}

export function thdnDbToPercent(db: number): number {
	return 100 * 10 ** (db / 20);
}
export function thdnPercentToDb(percent: number): number {
	return 20 * Math.log10(percent / 100);
}

/** Thermal steady state: every unit probe stays within `bandC` over `windowS` of soak time. */
export interface SteadyCriterion {
	bandC: number;
	windowS: number;
}
// Common practice for a soak log: "settled" when nothing moves more than 1 °C in 5 minutes.
export const STEADY_CRITERION: SteadyCriterion = { bandC: 1, windowS: 300 };
