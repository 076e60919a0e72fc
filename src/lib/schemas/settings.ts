// Shop settings: their zod schemas and defaults. Shared by the server (stored as JSON per
// key) and the admin settings form.
import { z } from 'zod';
import { DEFAULT_SIGN_OFF_SETTINGS, signOffSettingsSchema } from './sign-off';
import { DEFAULT_WORKSHEET_SETTINGS, worksheetSettingsSchema } from './worksheets';
import { DEFAULT_JOB_FILE_LIMITS, jobFileLimitsSchema } from './job-files';
import { DEFAULT_REPORT_SETTINGS, reportSettingsSchema } from './report';
import { moneySettingsSchema, type MoneySettings } from '../money';

/**
 * What an estimate starts from: an invented shop's figures, changed by an admin in Settings
 * (currency, tax, markup, labour rate, deposit). Tax rules are local: the shop sets its own.
 */
export const DEFAULT_MONEY_SETTINGS: MoneySettings = {
	currency: 'EUR',
	taxRateBasisPoints: 2000,
	pricesIncludeTax: false,
	partsMarkupBasisPoints: 3000,
	labourRatePerHourMinor: 6000,
	deposit: { kind: 'percent', basisPoints: 2500 }
};
export { moneySettingsSchema };
export type { MoneySettings };

export { DEFAULT_REPORT_SETTINGS, reportSettingsSchema };
export type { ReportSettings } from './report';

export { DEFAULT_JOB_FILE_LIMITS };

export { DEFAULT_SIGN_OFF_SETTINGS, signOffSettingsSchema };
export { DEFAULT_WORKSHEET_SETTINGS, worksheetSettingsSchema };
export type { SignOffSettings } from './sign-off';
export type { WorksheetSettings } from './worksheets';

export const soakLimitsSchema = z.object({
	/** Heatsink temperature that stops a soak run. */
	maxHeatsinkC: z.number().min(30).max(150),
	/** Fastest tolerated heatsink warming, °C per minute. */
	maxRiseCPerMin: z.number().positive().max(60),
	/** Largest tolerated difference between the channels' heatsinks. */
	maxDiffC: z.number().positive().max(100),
	/** Optional THD+N ceiling during the soak in dB (relative), null for none. */
	thdnCeilingDb: z.number().min(-160).max(0).nullable().optional()
});
export type SoakLimits = z.infer<typeof soakLimitsSchema>;

/**
 * Caps on stored snapshot audio (the WAV files): per job and for the whole shop. An upload that
 * would pass either is refused with 413, naming the cap and what is stored.
 */
export const snapshotStorageSchema = z.object({
	perJobMiB: z
		.number('Per-job snapshot storage is a number of MiB')
		.int('Per-job snapshot storage is a whole number of MiB')
		.min(1, 'Per-job snapshot storage is at least 1 MiB')
		.max(1_000_000, 'Per-job snapshot storage is at most 1,000,000 MiB'),
	perShopGiB: z
		.number('Shop snapshot storage is a number of GiB')
		.min(0.01, 'Shop snapshot storage is at least 0.01 GiB')
		.max(10_000, 'Shop snapshot storage is at most 10,000 GiB')
});
export type SnapshotStorageLimits = z.infer<typeof snapshotStorageSchema>;

/** Defaults: room for about a hundred 5 MB captures per job; admins change them in Settings. */
export const DEFAULT_SNAPSHOT_STORAGE: SnapshotStorageLimits = { perJobMiB: 500, perShopGiB: 20 };

/** Host names that mean this machine and that a CSP source can name (CSP has no IPv6 literals). */
const LOOPBACK_HOSTS = ['127.0.0.1', 'localhost'];

export const shopSettingsSchema = z.object({
	shopName: z.string().trim().min(1, 'Enter the shop name').max(120),
	/**
	 * Where the browser finds the bench bridge. It runs on the bench PC itself and listens on
	 * loopback, so only loopback addresses are accepted (the page's Content-Security-Policy
	 * allows no other WebSocket destination either).
	 */
	bridgeUrl: z
		.string()
		.trim()
		.max(300)
		.refine((s) => {
			try {
				const u = new URL(s);
				return u.protocol === 'ws:' && LOOPBACK_HOSTS.includes(u.hostname);
			} catch {
				return false;
			}
		}, 'Use the bench PC’s own bridge address, like ws://127.0.0.1:8787 (loopback only)'),
	/** Local mains frequency: where hum shows up in the spectrum. */
	mainsHz: z.union([z.literal(50), z.literal(60)], 'Mains is 50 Hz or 60 Hz'),
	soakDefaultLimits: soakLimitsSchema,
	snapshotStorage: snapshotStorageSchema,
	/** What a supervisor's approval needs (after snapshot passing, passed soak, four-eyes). */
	signOff: signOffSettingsSchema,
	/** Home mains, bias tolerance and offset limit the bench worksheets judge against. */
	worksheets: worksheetSettingsSchema,
	/** Per-file limit for files attached to a job (photos, PDFs, WAVs). */
	jobFiles: jobFileLimitsSchema,
	/** Contact lines, notes and link lifetime of the customer's report. */
	customerReport: reportSettingsSchema,
	/** Currency, tax, parts markup, labour rate and deposit for estimates and invoices. */
	money: moneySettingsSchema
});
export type ShopSettings = z.infer<typeof shopSettingsSchema>;

export const settingsPatchSchema = shopSettingsSchema
	.partial()
	.strict()
	.refine((v) => Object.keys(v).length > 0, 'Nothing to change');
export type SettingsPatch = z.infer<typeof settingsPatchSchema>;

/**
 * Soak limits a shop starts with; admins adjust them in Settings. The heatsink ceiling is a
 * common-practice figure for audio amplifiers (70–80 °C, from memory); the rise-rate limit is
 * set above a cold heatsink's first-minute climb at ⅛ power so it catches runaway, not warm-up.
 */
export const DEFAULT_SOAK_LIMITS: SoakLimits = {
	maxHeatsinkC: 70,
	maxRiseCPerMin: 8,
	maxDiffC: 10,
	// On by default as a gross-fault ceiling: THD+N past 5 % (−26 dB) at a fraction of rated power
	// means the unit is clipping or failing while it heats, whatever its temperatures say (common
	// practice); a shop or a run tightens it for a unit whose healthy figure is known.
	thdnCeilingDb: -26
};

export const SETTINGS_KEYS = [
	'shopName',
	'bridgeUrl',
	'mainsHz',
	'soakDefaultLimits',
	'snapshotStorage',
	'signOff',
	'worksheets',
	'jobFiles',
	'customerReport',
	'money'
] as const;
export type SettingsKey = (typeof SETTINGS_KEYS)[number];
