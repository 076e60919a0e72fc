// Shop settings: defaults, partial updates, validation, and tolerance of a bad stored row.
import { beforeEach, describe, expect, it } from 'vitest';
import { isDomainError } from './errors';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { defaultSettings, getSetting, getSettings, updateSettings } from './settings';
import { env } from './env';
import { DEFAULT_REPORT_SETTINGS } from '$lib/schemas/report';

let db: Db;
beforeEach(() => {
	db = openDb(':memory:');
});

function statusOf(fn: () => unknown): number | 'ok' {
	try {
		fn();
		return 'ok';
	} catch (e) {
		if (isDomainError(e)) return e.status;
		throw e;
	}
}

describe('settings', () => {
	it('answers defaults on an empty database', () => {
		expect(getSettings(db)).toEqual({
			shopName: 'Benchlight',
			bridgeUrl: env.BRIDGE_URL,
			mainsHz: 50,
			// common practice for a consumer amplifier heat soak
			soakDefaultLimits: { maxHeatsinkC: 70, maxRiseCPerMin: 8, maxDiffC: 10, thdnCeilingDb: -26 },
			snapshotStorage: { perJobMiB: 500, perShopGiB: 20 },
			// A shop starts strict: proof required, simulated soaks not proof, four eyes.
			signOff: {
				requireAfterSnapshotPass: true,
				requirePassedSoak: true,
				countAcceleratedSoak: false,
				allowSelfSignOff: false,
				requirePassedSafetyCheck: true
			},
			// IEC 60038 230 V mains; bias ±10 % and offset ±50 mV are common practice.
			worksheets: { homeMainsVoltsRms: 230, biasTolerancePercent: 10, offsetLimitMillivolts: 50 },
			// Room for a phone photo or a long stereo capture (issue 13 asks for 50 MiB).
			jobFiles: { maxFileMiB: 50 },
			customerReport: DEFAULT_REPORT_SETTINGS,
			// An invented shop's pricing: EUR, 20 % tax on top, 30 % parts markup, 60.00 an hour, a quarter down.
			money: {
				currency: 'EUR',
				taxRateBasisPoints: 2000,
				pricesIncludeTax: false,
				partsMarkupBasisPoints: 3000,
				labourRatePerHourMinor: 6000,
				deposit: { kind: 'percent', basisPoints: 2500 }
			}
		});
	});

	it('stores a partial update and keeps the rest', () => {
		const s = updateSettings(db, { mainsHz: 60, shopName: 'Bench Row' });
		expect(s).toMatchObject({ mainsHz: 60, shopName: 'Bench Row', bridgeUrl: env.BRIDGE_URL });
		updateSettings(db, {
			soakDefaultLimits: { maxHeatsinkC: 65, maxRiseCPerMin: 2, maxDiffC: 8, thdnCeilingDb: -60 }
		});
		expect(getSetting(db, 'mainsHz')).toBe(60);
		expect(getSetting(db, 'soakDefaultLimits')).toEqual({
			maxHeatsinkC: 65,
			maxRiseCPerMin: 2,
			maxDiffC: 8,
			thdnCeilingDb: -60
		});
		expect(db.select().from(table.settings).all()).toHaveLength(3);
	});

	it('refuses bad values (400) and stores none of a bad patch', () => {
		expect(statusOf(() => updateSettings(db, { bridgeUrl: 'http://127.0.0.1:8787' }))).toBe(400);
		// The bridge listens on loopback only; a LAN or public address is refused.
		expect(statusOf(() => updateSettings(db, { bridgeUrl: 'ws://192.0.2.10:8787' }))).toBe(400);
		expect(statusOf(() => updateSettings(db, { mainsHz: 55 as 50 }))).toBe(400);
		expect(statusOf(() => updateSettings(db, { shopName: 'Fine', colour: 'red' } as never))).toBe(400);
		expect(statusOf(() => updateSettings(db, {}))).toBe(400);
		expect(getSettings(db)).toEqual(defaultSettings());
		expect(statusOf(() => updateSettings(db, { bridgeUrl: 'ws://localhost:8787' }))).toBe('ok');
	});

	it('falls back to the default for a stored value that no longer validates', () => {
		db.insert(table.settings).values({ key: 'mainsHz', value: 'sixty' }).run();
		db.insert(table.settings).values({ key: 'shopName', value: 'Kept' }).run();
		expect(getSettings(db)).toMatchObject({ mainsHz: 50, shopName: 'Kept' });
	});
});
