// Admin: shop settings (name, bridge address, mains frequency, default soak limits, snapshot
// storage caps, what a sign-off requires).
import { fail } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireAdmin } from '$lib/server/guards';
import { getSettings, updateSettings } from '$lib/server/settings';
import { shopSettingsSchema } from '$lib/schemas/settings';
import { number, text } from '$lib/forms';
import { CURRENCY_CODES, parseMoney, type CurrencyCode } from '$lib/money';
import { pageLoad, formActions } from '$lib/server/handlers';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	requireAdmin(event);
	return { settings: getSettings(db) };
});

const SIGN_OFF_BOXES = [
	'requireAfterSnapshotPass',
	'requirePassedSoak',
	'countAcceleratedSoak',
	'allowSelfSignOff',
	'requirePassedSafetyCheck'
] as const;

const REPORT_TEXTS = ['address', 'phone', 'email', 'warrantyNote', 'safetyNote', 'footer'] as const;
const WORKSHEET_NUMBERS = ['homeMainsVoltsRms', 'biasTolerancePercent', 'offsetLimitMillivolts'] as const;
const MONEY_TEXTS = [
	'currency',
	'taxRatePercent',
	'partsMarkupPercent',
	'labourRate',
	'depositKind',
	'depositPercent',
	'depositAmount'
] as const;

/** A typed percentage ("20", "7.5") as basis points; NaN when it is not one (the schema says so). */
function basisPoints(text: string): number {
	const t = text.trim().replace(',', '.');
	return /^\d{1,6}(\.\d{1,2})?$/.test(t) ? Math.round(Number(t) * 100) : NaN;
}

/** The money settings from the form, or the stored ones when the form leaves them out. */
function moneyFrom(
	form: FormData,
	stored: ReturnType<typeof getSettings>['money'],
	ticked: (n: string) => boolean
) {
	if (!form.has('currency')) return stored;
	const currency = text(form, 'currency') as CurrencyCode;
	const known = (CURRENCY_CODES as readonly string[]).includes(currency);
	const amount = (n: string) => (known ? (parseMoney(text(form, n), currency) ?? NaN) : NaN);
	const kind = text(form, 'depositKind');
	return {
		currency,
		taxRateBasisPoints: basisPoints(text(form, 'taxRatePercent')),
		pricesIncludeTax: ticked('pricesIncludeTax'),
		partsMarkupBasisPoints: basisPoints(text(form, 'partsMarkupPercent')),
		labourRatePerHourMinor: amount('labourRate'),
		deposit:
			kind === 'percent'
				? { kind, basisPoints: basisPoints(text(form, 'depositPercent')) }
				: kind === 'fixed'
					? { kind, amountMinor: amount('depositAmount') }
					: { kind: 'none' }
	};
}

export const actions: Actions = formActions({
	default: async (event) => {
		const admin = requireAdmin(event);
		const form = await event.request.formData();
		const names = [
			'shopName',
			'bridgeUrl',
			'mainsHz',
			'maxHeatsinkC',
			'maxRiseCPerMin',
			'maxDiffC',
			'thdnCeilingDb',
			'perJobMiB',
			'perShopGiB',
			...WORKSHEET_NUMBERS,
			'maxFileMiB',
			...REPORT_TEXTS,
			'linkLifetimeDays',
			...MONEY_TEXTS
		];
		const values = Object.fromEntries(names.map((n) => [n, text(form, n)]));
		// Checkboxes: present when ticked.
		const ticked = (name: string) => form.get(name) !== null;
		for (const n of SIGN_OFF_BOXES) values[n] = ticked(n) ? 'on' : '';
		values.allowDraftSend = ticked('allowDraftSend') ? 'on' : '';
		values.pricesIncludeTax = ticked('pricesIncludeTax') ? 'on' : '';
		const thdn = number(form, 'thdnCeilingDb');
		// Storage caps left out of a post keep what is stored (the form always sends them).
		const stored = getSettings(db);
		const storage = stored.snapshotStorage;
		const parsed = shopSettingsSchema.safeParse({
			shopName: values.shopName,
			bridgeUrl: values.bridgeUrl,
			mainsHz: number(form, 'mainsHz'),
			soakDefaultLimits: {
				maxHeatsinkC: number(form, 'maxHeatsinkC'),
				maxRiseCPerMin: number(form, 'maxRiseCPerMin'),
				maxDiffC: number(form, 'maxDiffC'),
				thdnCeilingDb: thdn === undefined ? null : thdn
			},
			snapshotStorage: {
				perJobMiB: form.has('perJobMiB') ? number(form, 'perJobMiB') : storage.perJobMiB,
				perShopGiB: form.has('perShopGiB') ? number(form, 'perShopGiB') : storage.perShopGiB
			},
			jobFiles: {
				maxFileMiB: form.has('maxFileMiB') ? number(form, 'maxFileMiB') : stored.jobFiles.maxFileMiB
			},
			signOff: {
				requireAfterSnapshotPass: ticked('requireAfterSnapshotPass'),
				requirePassedSoak: ticked('requirePassedSoak'),
				countAcceleratedSoak: ticked('countAcceleratedSoak'),
				allowSelfSignOff: ticked('allowSelfSignOff'),
				requirePassedSafetyCheck: ticked('requirePassedSafetyCheck')
			},
			// Report lines left out of a post keep what is stored (the form always sends them).
			customerReport: {
				...Object.fromEntries(
					REPORT_TEXTS.map((n) => [n, form.has(n) ? values[n] : stored.customerReport[n]])
				),
				linkLifetimeDays: form.has('linkLifetimeDays')
					? number(form, 'linkLifetimeDays')
					: stored.customerReport.linkLifetimeDays,
				allowDraftSend: form.has('linkLifetimeDays')
					? ticked('allowDraftSend')
					: stored.customerReport.allowDraftSend
			},
			// Worksheet figures left out of a post keep what is stored (the form always sends them).
			worksheets: Object.fromEntries(
				WORKSHEET_NUMBERS.map((n) => [n, form.has(n) ? number(form, n) : stored.worksheets[n]])
			),
			// Money left out of a post keeps what is stored (the form always sends it).
			money: moneyFrom(form, stored.money, ticked)
		});
		if (!parsed.success) {
			// Nested limits report under their own field name.
			const errors: Record<string, string[]> = {};
			for (const issue of parsed.error.issues) {
				const key = String(issue.path[issue.path.length - 1] ?? '_form');
				(errors[key] ??= []).push(issue.message);
			}
			return fail(400, { values, errors, ok: false });
		}
		updateSettings(db, parsed.data, admin.id);
		return { ok: true };
	}
});
