// Shop settings stored one JSON value per key. Reads fall back to defaults (and to the
// default for a stored value that no longer validates), so a bad row never breaks a page.
import { inArray, sql } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { env } from './env';
import { validate } from './validate';
import { audit, changes } from './audit';
import {
	DEFAULT_SNAPSHOT_STORAGE,
	DEFAULT_SIGN_OFF_SETTINGS,
	DEFAULT_JOB_FILE_LIMITS,
	DEFAULT_REPORT_SETTINGS,
	DEFAULT_MONEY_SETTINGS,
	DEFAULT_SOAK_LIMITS,
	DEFAULT_WORKSHEET_SETTINGS,
	SETTINGS_KEYS,
	settingsPatchSchema,
	shopSettingsSchema,
	type SettingsKey,
	type SettingsPatch,
	type ShopSettings
} from '../schemas/settings';

export function defaultSettings(): ShopSettings {
	return {
		shopName: 'Benchlight',
		bridgeUrl: env.BRIDGE_URL,
		mainsHz: 50,
		soakDefaultLimits: { ...DEFAULT_SOAK_LIMITS },
		snapshotStorage: { ...DEFAULT_SNAPSHOT_STORAGE },
		signOff: { ...DEFAULT_SIGN_OFF_SETTINGS },
		worksheets: { ...DEFAULT_WORKSHEET_SETTINGS },
		jobFiles: { ...DEFAULT_JOB_FILE_LIMITS },
		customerReport: { ...DEFAULT_REPORT_SETTINGS },
		money: { ...DEFAULT_MONEY_SETTINGS, deposit: { ...DEFAULT_MONEY_SETTINGS.deposit } }
	};
}

export function getSettings(db: Db): ShopSettings {
	const settings = defaultSettings();
	const rows = db
		.select()
		.from(table.settings)
		.where(inArray(table.settings.key, [...SETTINGS_KEYS]))
		.all();
	const shape = shopSettingsSchema.shape;
	for (const row of rows) {
		const key = row.key as SettingsKey;
		const parsed = shape[key].safeParse(row.value);
		if (parsed.success) Object.assign(settings, { [key]: parsed.data });
	}
	return settings;
}

export function getSetting<K extends SettingsKey>(db: Db, key: K): ShopSettings[K] {
	return getSettings(db)[key];
}

/**
 * Store the given settings (validated; 400 on bad input) and answer the full set. What changed
 * goes into the audit trail in the same transaction (`actorId` null: the system, e.g. the seed).
 */
export function updateSettings(db: Db, patch: SettingsPatch, actorId: string | null = null): ShopSettings {
	const data = validate(settingsPatchSchema, patch);
	const now = new Date();
	const before = getSettings(db);
	db.transaction((tx) => {
		const changed = changes(before, data);
		if (Object.keys(changed).length)
			audit(tx, { actorId, action: 'settings.changed', subject: 'shop settings', detail: changed, at: now });
		for (const key of SETTINGS_KEYS) {
			if (data[key] === undefined) continue;
			tx.insert(table.settings)
				.values({ key, value: data[key], updatedAt: now })
				.onConflictDoUpdate({
					target: table.settings.key,
					set: { value: sql`excluded.value`, updatedAt: now }
				})
				.run();
		}
	});
	return getSettings(db);
}
